import type { ModelRunDetail } from '#shared/types/models'

/** One model run; polls once a second while the fit is still running in its worker. */
export function useModelRun(id: MaybeRefOrGetter<number>) {
  const { data, error, refresh, status } = useFetch<ModelRunDetail>(() => `/api/models/${toValue(id)}`)
  let timer: ReturnType<typeof setInterval> | undefined
  watch(() => data.value?.status, (state) => {
    if (!import.meta.client) return
    if (state === 'running' && !timer) timer = setInterval(() => refresh(), 1000)
    if (state !== 'running' && timer) {
      clearInterval(timer)
      timer = undefined
    }
  }, { immediate: true })
  onBeforeUnmount(() => timer && clearInterval(timer))
  const results = computed(() => data.value?.results ?? null)
  const seLabel = computed(() => seLabelOf(results.value?.covariance.type))
  return { run: data, results, seLabel, error, refresh, status }
}
