import type { FetchError } from 'ofetch'

/** Runs one mutation against the API and keeps its error message and field errors for the form. */
export function useApiAction() {
  const busy = ref(false)
  const message = ref('')
  const fieldErrors = ref<FieldErrors>({})

  async function run<T>(action: () => Promise<T>): Promise<T | undefined> {
    busy.value = true
    message.value = ''
    fieldErrors.value = {}
    try {
      return await action()
    }
    catch (error) {
      const e = error as FetchError<{ message?: string, data?: { fieldErrors?: FieldErrors } }>
      message.value = e.data?.message ?? 'No connection to the server. Try again.'
      fieldErrors.value = e.data?.data?.fieldErrors ?? {}
      return undefined
    }
    finally {
      busy.value = false
    }
  }

  return { busy, message, fieldErrors, run }
}
