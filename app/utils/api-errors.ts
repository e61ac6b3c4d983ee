import type { FetchError } from 'ofetch'

interface ErrorBody {
  message?: string
  data?: { message?: string, fieldErrors?: FieldErrors, reason?: string }
}

/** The readable message, per-field messages and reason code of a failed $fetch, for forms to show. */
export function problemOf(error: unknown): { message: string, fieldErrors: FieldErrors, reason?: string } {
  const fetchError = error as FetchError<ErrorBody>
  const body = fetchError.data
  if (!fetchError.statusCode) return { message: 'No connection to the server. Check the network and try again.', fieldErrors: {} }
  return {
    message: body?.data?.message ?? body?.message ?? 'Something went wrong. Try again.',
    fieldErrors: body?.data?.fieldErrors ?? {},
    reason: body?.data?.reason
  }
}
