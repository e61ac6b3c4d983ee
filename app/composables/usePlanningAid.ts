import type { PublishedModel } from '#shared/utils/modelling/farm-prediction'
import { fieldDb } from '~/utils/field-db'

/**
 * The round's published model for the planning aid, kept on the tablet so the aid works offline. Refreshed from
 * the server whenever there is a connection; null when the coordinator has not switched the aid on.
 */
export function usePlanningAid(roundId: MaybeRefOrGetter<number | undefined>) {
  const { user } = useUserSession()
  const model = ref<PublishedModel | null>(null)

  async function load() {
    const id = toValue(roundId)
    if (!id || !user.value) return
    const db = fieldDb(user.value.id)
    const key = `model:${id}` as const
    model.value = ((await db.cache.get(key))?.value as PublishedModel | null | undefined) ?? null
    if (!navigator.onLine) return
    try {
      const answer = await $fetch<{ model: PublishedModel | null }>('/api/field/model', { query: { roundId: id } })
      model.value = answer.model
      await db.cache.put({ key, value: answer.model })
    }
    catch {
      // Offline or signed out: keep the copy on the tablet.
    }
  }

  onMounted(load)
  watch(() => toValue(roundId), load)
  return { model }
}
