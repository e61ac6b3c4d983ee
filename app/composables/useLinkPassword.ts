import type { TokenCheckAnswer } from '#shared/types/team'

/**
 * The page behind an invitation or reset link: checks the link first (so a dead link says so before any
 * typing), then sets the password once and sends the person to sign in.
 */
export function useLinkPassword(purpose: 'invitation' | 'reset') {
  const route = useRoute()
  const token = computed(() => typeof route.query.token === 'string' ? route.query.token : '')
  const link = ref<TokenCheckAnswer | null>(null)
  const linkError = ref('')
  const checking = ref(true)
  const form = reactive({ name: '', password: '', repeat: '' })
  const fieldErrors = ref<FieldErrors>({})
  const formError = ref('')
  const busy = ref(false)

  async function check() {
    checking.value = true
    linkError.value = ''
    try {
      if (!token.value) throw new Error('no token')
      link.value = await $fetch<TokenCheckAnswer>('/api/auth/link', { method: 'POST', body: { token: token.value, purpose } })
      form.name = link.value.name
    }
    catch (error) {
      linkError.value = token.value ? problemOf(error).message : 'This page needs the link from your message. Open the link again, all of it.'
    }
    finally {
      checking.value = false
    }
  }

  async function submit() {
    formError.value = ''
    const body = { token: token.value, purpose, password: form.password, ...(purpose === 'invitation' ? { name: form.name } : {}) }
    const parsed = setPasswordSchema.safeParse(body)
    const errors: FieldErrors = parsed.success ? {} : fieldErrorsOf(parsed.error)
    if (form.repeat !== form.password) errors.repeat = 'The two passwords differ'
    fieldErrors.value = errors
    if (!parsed.success || errors.repeat) return
    busy.value = true
    try {
      const answer = await $fetch<{ email: string }>('/api/auth/password', { method: 'POST', body: parsed.data })
      await navigateTo({ path: '/signin', query: { done: purpose, email: answer.email } })
    }
    catch (error) {
      const problem = problemOf(error)
      fieldErrors.value = problem.fieldErrors
      if (problem.reason) linkError.value = problem.message
      else if (!Object.keys(problem.fieldErrors).length) formError.value = problem.message
    }
    finally {
      busy.value = false
    }
  }

  onMounted(check)
  return { link, linkError, checking, form, fieldErrors, formError, busy, submit }
}
