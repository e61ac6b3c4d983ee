import type { FetchError } from 'ofetch'

/** The sign-in form's state: the same zod schema as the server checks fields before anything is sent. */
export function useSignIn() {
  const { fetch: refreshSession } = useUserSession()
  const form = reactive({ email: '', password: '' })
  const fieldErrors = ref<FieldErrors>({})
  const formError = ref('')
  const busy = ref(false)

  async function submit(next = '/') {
    formError.value = ''
    const parsed = signInSchema.safeParse(form)
    fieldErrors.value = parsed.success ? {} : fieldErrorsOf(parsed.error)
    if (!parsed.success) return
    busy.value = true
    try {
      await $fetch('/api/auth/signin', { method: 'POST', body: parsed.data })
      await refreshSession()
      await navigateTo(next.startsWith('/') && !next.startsWith('//') ? next : '/')
    }
    catch (error) {
      const fetchError = error as FetchError<{ message?: string }>
      formError.value = fetchError.data?.message
        ?? (fetchError.statusCode ? 'Sign-in failed. Try again.' : 'No connection to the server. Check the network and try again.')
    }
    finally {
      busy.value = false
    }
  }

  return { form, fieldErrors, formError, busy, submit }
}
