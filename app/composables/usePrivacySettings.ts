import type { PrivacyView } from '#shared/types/privacy'
import { PERSONAL_DATA_KINDS, type PersonalDataKind } from '#shared/utils/schemas/privacy'

/**
 * The personal data part of the settings page: retention periods (days after a round closes; empty keeps), whether
 * an erasure keeps non-identifying answers, what the purge removes next, and "purge what is due now" (confirmed).
 */
export function usePrivacySettings() {
  const { ask } = useConfirm()
  const { data, error, refresh } = useFetch<PrivacyView>('/api/settings/privacy')
  const keepAnswers = ref(false)
  const days = reactive<Record<PersonalDataKind, string>>({ photos: '', gps: '', names: '' })
  const fieldErrors = ref<FieldErrors>({})
  const message = ref('')
  const busy = ref(false)

  watch(data, (view) => {
    if (!view) return
    keepAnswers.value = view.settings.keepAnswersAfterErasure
    for (const kind of PERSONAL_DATA_KINDS) days[kind] = view.settings.retentionDays[kind] === null ? '' : String(view.settings.retentionDays[kind])
  }, { immediate: true })

  async function save() {
    message.value = ''
    // A number input's v-model may hand back a number: read every value as text first.
    const retentionDays = Object.fromEntries(PERSONAL_DATA_KINDS.map(k => [k, String(days[k] ?? '').trim() === '' ? null : Number(days[k])]))
    const parsed = privacySettingsSchema.safeParse({ keepAnswersAfterErasure: keepAnswers.value, retentionDays })
    fieldErrors.value = parsed.success ? {} : fieldErrorsOf(parsed.error)
    if (!parsed.success) return
    busy.value = true
    try {
      data.value = await $fetch<PrivacyView>('/api/settings/privacy', { method: 'PUT', body: parsed.data })
      message.value = 'Personal data rules saved.'
    }
    catch (failure) {
      const problem = problemOf(failure)
      fieldErrors.value = problem.fieldErrors
      message.value = problem.message
    }
    finally {
      busy.value = false
    }
  }

  const due = computed(() => (data.value?.upcoming ?? []).filter(item => Date.parse(item.dueAt) <= Date.now()))

  async function purgeNow() {
    const items = due.value
    if (!items.length || !await ask({
      title: 'Purge the personal data that is due?',
      points: [
        ...items.map(i => `${i.roundName}: ${i.count} × ${PERSONAL_DATA_KIND_LABELS[i.kind].toLowerCase()}.`),
        'Photos are deleted from storage; positions and free-text answers are removed; farm codes become their pseudonyms.',
        'This cannot be undone (backups keep their copies until they age out).'
      ],
      confirmLabel: 'Purge now',
      tone: 'danger'
    })) return
    busy.value = true
    try {
      const answer = await $fetch<{ view: PrivacyView }>('/api/settings/privacy/purge', { method: 'POST' })
      data.value = answer.view
      message.value = 'Purged what was due.'
    }
    catch (failure) {
      message.value = problemOf(failure).message
    }
    finally {
      busy.value = false
    }
  }

  return { data, error, refresh, keepAnswers, days, fieldErrors, message, busy, due, save, purgeNow }
}
