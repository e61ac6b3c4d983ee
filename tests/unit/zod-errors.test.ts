import { describe, expect, it } from 'vitest'
import { signInSchema } from '../../shared/utils/schemas/auth'
import { fieldErrorsOf, summaryOf } from '../../shared/utils/zod-errors'

describe('readable validation messages', () => {
  it('gives one message per field, in the form\'s words', () => {
    const result = signInSchema.safeParse({ email: 'nope', password: '' })
    expect(result.success).toBe(false)
    const errors = fieldErrorsOf(result.error!)
    expect(errors).toEqual({ email: 'Enter a valid e-mail address', password: 'Enter your password' })
    expect(summaryOf(errors)).toBe('email: Enter a valid e-mail address; password: Enter your password')
  })

  it('normalises the e-mail', () => {
    expect(signInSchema.parse({ email: ' Ann@Example.ORG ', password: 'x' }).email).toBe('ann@example.org')
  })
})
