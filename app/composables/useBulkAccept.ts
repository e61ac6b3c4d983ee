import type { ReviewRow } from '#shared/types/field'
import type { Page } from '#shared/types/listing'

/**
 * Accepting every unflagged visit still to review, within the review page's round, village, enumerator and farm
 * filters: the count is shown on the button and in the confirmation, and the server refuses if it changed meanwhile.
 */
export function useBulkAccept(filters: Record<string, string>) {
  const { ask } = useConfirm()
  const scope = computed(() => ({
    roundId: filters.roundId || undefined,
    villageId: filters.villageId || undefined,
    enumeratorId: filters.enumeratorId || undefined,
    farm: filters.farm || undefined
  }))
  const { data, refresh } = useFetch<Page<ReviewRow>>('/api/review/visits', {
    query: computed(() => ({ ...scope.value, state: 'received', flagged: '0', pageSize: 5 })),
    immediate: Boolean(filters.roundId),
    // Only the total is needed; the rows stay on the server's side of the count.
    transform: page => ({ ...page, items: [] })
  })
  const count = computed(() => filters.roundId ? data.value?.total ?? 0 : 0)

  async function accept(): Promise<string | null> {
    const n = count.value
    if (!n || !await ask({
      title: `Accept ${n} unflagged visit${n === 1 ? '' : 's'}?`,
      points: [
        `${n} visit${n === 1 ? '' : 's'} still to review ${n === 1 ? 'has' : 'have'} no quality flag${filters.villageId || filters.enumeratorId || filters.farm ? ' within the filters you chose' : ' in this round'}.`,
        'Accepted visits count in the adoption models; flagged visits are left for you to look at one by one.',
        'A visit can still be corrected after it is accepted.'
      ],
      confirmLabel: `Accept ${n} visit${n === 1 ? '' : 's'}`
    })) return null
    try {
      const answer = await $fetch<{ accepted: number }>('/api/review/accept-unflagged', {
        method: 'POST',
        body: {
          roundId: Number(filters.roundId),
          ...(filters.villageId ? { villageId: Number(filters.villageId) } : {}),
          ...(filters.enumeratorId ? { enumeratorId: Number(filters.enumeratorId) } : {}),
          ...(filters.farm ? { farm: filters.farm } : {}),
          count: n
        }
      })
      return `${answer.accepted} visit${answer.accepted === 1 ? '' : 's'} accepted.`
    }
    catch (error) {
      await refresh()
      return problemOf(error).message
    }
  }

  return { count, accept, refresh }
}
