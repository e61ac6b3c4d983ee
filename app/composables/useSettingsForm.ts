import type { SettingsView } from '#shared/types/team'

/**
 * The organisation settings form: loads, checks with the shared schema, saves, and shows what the server said.
 * Awaited, so the form is filled from the settings before the first render, on the server and in the browser
 * alike: filling it from a watcher left the server's HTML empty while the browser's first render had the values,
 * a hydration mismatch on every visit.
 */
export async function useSettingsForm() {
  const { data, error, refresh } = await useFetch<SettingsView>('/api/settings')
  const form = reactive<SettingsView>(data.value
    ? structuredClone(toRaw(data.value))
    : { name: '', defaultClusterVariable: '', minVisitsForFunders: 5, funderOrganisations: [] })
  const fieldErrors = ref<FieldErrors>({})
  const formError = ref('')
  const saved = ref(false)
  const busy = ref(false)

  watch(data, (value) => {
    if (value) Object.assign(form, structuredClone(toRaw(value)))
  })

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
