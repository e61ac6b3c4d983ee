import { liveQuery } from 'dexie'
import type { SampleOutcomeRecord } from '#shared/utils/schemas/sample'
import { fieldDb } from '~/utils/field-db'
import { type LocalSampleOutcome, localSampleOutcomes, recordSampleOutcome } from '~/utils/sample-sync'

/** The non-interviews recorded on this tablet (live), and recording one. */
export function useSampleOutcomes() {
  const { user } = useUserSession()
  const outcomes = ref<LocalSampleOutcome[]>([])
  let subscription: { unsubscribe: () => void } | null = null
  onMounted(() => {
    if (!user.value) return
    const db = fieldDb(user.value.id)
    subscription = liveQuery(() => localSampleOutcomes(db)).subscribe((o) => {
      outcomes.value = o
    })
  })
  onBeforeUnmount(() => subscription?.unsubscribe())
  async function record(outcome: SampleOutcomeRecord) {
    if (user.value) await recordSampleOutcome(fieldDb(user.value.id), outcome)
  }
  return { outcomes, record }
}
