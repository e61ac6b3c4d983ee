import type { RoundRow } from '#shared/types/field'

/** The name, technology and season of a fit's round, for headings and the printed report. */
export function useRoundOfRun(roundId: MaybeRefOrGetter<number | undefined>) {
  const { data: rounds } = useFetch<RoundRow[]>('/api/rounds', { key: 'rounds-for-results' })
  return computed(() => rounds.value?.find(r => r.id === toValue(roundId)) ?? null)
}
