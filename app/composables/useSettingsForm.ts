import type { SettingsView } from '#shared/types/team'

/** The organisation settings form: loads, checks with the shared schema, saves, and shows what the server said. */
export function useSettingsForm() {
  const { data, error, refresh } = useFetch<SettingsView>('/api/settings')
  const form = reactive<SettingsView>({ name: '', defaultClusterVariable: '', minVisitsForFunders: 5, funderOrganisations: [] })
  const fieldErrors = ref<FieldErrors>({})
  const formError = ref('')
  const saved = ref(false)
  const busy = ref(false)

  watch(data, (value) => {
    if (value) Object.assign(form, structuredClone(toRaw(value)))
  }, { immediate: true })

  async function save() {
    saved.value = false
    formError.value = ''
    const parsed = settingsSchema.safeParse({ ...form, minVisitsForFunders: Number(form.minVisitsForFunders) })
    fieldErrors.value = parsed.success ? {} : fieldErrorsOf(parsed.error)
    if (!parsed.success) return
    busy.value = true
    try {
      await $fetch('/api/settings', { method: 'PUT', body: parsed.data })
      await refresh()
      saved.value = true
    }
    catch (failure) {
      const problem = problemOf(failure)
      fieldErrors.value = problem.fieldErrors
      formError.value = problem.message
    }
    finally {
      busy.value = false
    }
  }

  return { form, error, fieldErrors, formError, saved, busy, save }
}
