import type { z } from 'zod'

/**
 * A validator for h3's readValidatedBody / getValidatedQuery / getValidatedRouterParams that answers
 * 400 with one readable line plus per-field messages, never a stack trace.
 */
export function validateWith<T extends z.ZodType>(schema: T) {
  return (input: unknown): z.infer<T> => {
    const result = schema.safeParse(input)
    if (result.success) return result.data
    const fieldErrors = fieldErrorsOf(result.error)
    // h3 wraps what a validator throws into a 400 "Validation Error" whose message and data come from it.
    throw { message: summaryOf(fieldErrors), fieldErrors }
  }
}
