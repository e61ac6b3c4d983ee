import type { ModelRunDetail } from '#shared/types/models'
import { RUN_WAIT_MAX_MS } from '#shared/utils/modelling/request'

/**
 * One model run. While its fit is running, the page asks the server to answer once the fit has ended (`?wait=`), so
 * the results show as soon as they are stored rather than at the next poll; after a failed request it asks again
 * a little later.
 */
export function useModelRun(id: MaybeRefOrGetter<number>) {
  const { data, error, refresh, status } = useFetch<ModelRunDetail>(() => `/api/models/${toValue(id)}`)
  let following: AbortController | null = null
  async function follow(runId: number) {
    if (following && !following.signal.aborted) return
    const controller = following = new AbortController()
    const stillRunning = () => !controller.signal.aborted && data.value?.id === runId && data.value.status === 'running'
    try {
      while (stillRunning()) {
        try {
          const answer = await $fetch<ModelRunDetail>(`/api/models/${runId}`, { query: { wait: RUN_WAIT_MAX_MS }, signal: controller.signal })
          if (!controller.signal.aborted) data.value = answer
        }
        catch {
          if (!controller.signal.aborted) await new Promise(resolve => setTimeout(resolve, 2000))
        }
      }
    }
    finally {
      if (following === controller) following = null
    }
  }
  watch(() => [data.value?.id, data.value?.status] as const, ([runId, state]) => {
    // Another run asked for meanwhile: its own answer is on the way.
    if (import.meta.client && state === 'running' && runId === toValue(id)) void follow(runId)
  }, { immediate: true })
  watch(() => toValue(id), () => following?.abort())
  onBeforeUnmount(() => following?.abort())
  const results = computed(() => data.value?.results ?? null)
  const seLabel = computed(() => seLabelOf(results.value?.covariance.type))
  return { run: data, results, seLabel, error, refresh, status }
}
