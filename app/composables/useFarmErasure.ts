import type { ErasureResult, FarmFootprint } from '#shared/types/privacy'

/**
 * Erasing one farm's personal data at the farmer's request: look the farm up (where its data lives), give the
 * reason, confirm in the app's dialog, then show what was erased. Checked with the shared schema before sending.
 */
export function useFarmErasure() {
  const { ask } = useConfirm()
  const farmCode = ref('')
  const reason = ref('')
  const footprint = ref<FarmFootprint | null>(null)
  const result = ref<ErasureResult | null>(null)
  const fieldErrors = ref<FieldErrors>({})
  const formError = ref('')
  const busy = ref(false)

  async function lookUp() {
    result.value = null
    formError.value = ''
    footprint.value = null
    const parsed = farmCodeSchema.safeParse(farmCode.value)
    fieldErrors.value = parsed.success ? {} : { farmCode: parsed.error.issues[0]?.message ?? 'Enter the farm code' }
    if (!parsed.success) return
    busy.value = true
    try {
      footprint.value = await $fetch<FarmFootprint>('/api/privacy/farm', { query: { code: parsed.data } })
    }
    catch (error) {
      formError.value = problemOf(error).message
    }
    finally {
      busy.value = false
    }
  }

  async function erase() {
    const found = footprint.value
    if (!found) return
    const parsed = erasureRequestSchema.safeParse({ farmCode: found.farmCode, reason: reason.value })
    fieldErrors.value = parsed.success ? {} : fieldErrorsOf(parsed.error)
    if (!parsed.success) return
    const accepted = found.rounds.reduce((n, r) => n + r.accepted, 0)
    const ok = await ask({
      title: `Erase farm ${found.farmCode}'s personal data?`,
      points: [
        `${found.visits} visit${found.visits === 1 ? '' : 's'} in ${found.rounds.length} round${found.rounds.length === 1 ? '' : 's'} ${found.visits === 1 ? 'loses' : 'lose'} the farm code (replaced by a new id), position, photos (${found.photos}) and free-text answers.`,
        `The ${found.tablets} tablet${found.tablets === 1 ? '' : 's'} holding these visits delete${found.tablets === 1 ? 's' : ''} their copies at the next sync; later exports leave them out or show the new id.`,
        accepted
          ? 'Model fits that used the farm are marked as built on data that has since changed.'
          : 'No accepted visit of the farm: no model fit used it.',
        'This cannot be undone. The audit log keeps your reason, not the erased values.'
      ],
      confirmLabel: 'Erase the personal data',
      tone: 'danger'
    })
    if (!ok) return
    busy.value = true
    try {
      result.value = await $fetch<ErasureResult>('/api/privacy/erasures', { method: 'POST', body: parsed.data })
      footprint.value = null
      reason.value = ''
      farmCode.value = ''
    }
    catch (error) {
      const problem = problemOf(error)
      fieldErrors.value = problem.fieldErrors
      formError.value = problem.message
    }
    finally {
      busy.value = false
    }
  }

  return { farmCode, reason, footprint, result, fieldErrors, formError, busy, lookUp, erase }
}
