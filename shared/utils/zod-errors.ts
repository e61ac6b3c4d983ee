import type { z } from 'zod'

export interface FieldErrors { [field: string]: string }

/** Turns a zod error into one readable message per field, for forms and for 400 answers alike. */
export function fieldErrorsOf(error: z.ZodError): FieldErrors {
  const out: FieldErrors = {}
  for (const issue of error.issues) {
    const key = issue.path.length ? issue.path.join('.') : '_'
    if (!(key in out)) out[key] = issue.message
  }
  return out
}

export function summaryOf(errors: FieldErrors): string {
  return Object.entries(errors)
    .map(([field, message]) => field === '_' ? message : `${field}: ${message}`)
    .join('; ')
}
