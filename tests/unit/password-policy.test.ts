import { describe, expect, it } from 'vitest'
import commonPasswords from '../../server/data/common-passwords.json'
import { passwordProblem } from '../../server/utils/password-policy'
import { newPasswordSchema } from '../../shared/utils/schemas/team'

describe('new passwords', () => {
  it('ships a list of at least 1,000 common passwords, lower-case and without repeats', () => {
    expect(commonPasswords.length).toBeGreaterThanOrEqual(1000)
    expect(new Set(commonPasswords).size).toBe(commonPasswords.length)
    expect(commonPasswords.every(p => p === p.toLowerCase() && p.trim() === p && p.length > 0)).toBe(true)
    expect(commonPasswords).toContain('password')
  })

  it.each([
    ['short', /at least 10 characters/],
    ['1234567890', /most common/],
    ['QWERTYUIOP', /most common/],
    ['password2026!', /most common/],
    ['Football123456', /most common/],
    ['aaaaaaaaaaaa', /more than two different characters/],
    ['ababababababab', /more than two different characters/]
  ])('refuses %s', (password, message) => {
    expect(passwordProblem(password)).toMatch(message)
  })

  it('refuses a password built on the e-mail address', () => {
    expect(passwordProblem('wanjiru.kamau-2026', 'wanjiru.kamau@kestrel-valley.example')).toMatch(/e-mail address/)
  })

  it.each(['maize-rows-under-blue-sky', 'Tr4ctor&Sorghum', 'ombara river at dawn'])('accepts %s', (password) => {
    expect(passwordProblem(password, 'someone@kestrel-valley.example')).toBeNull()
  })

  it('the shared schema that forms use checks the length the same way', () => {
    expect(newPasswordSchema.safeParse('123456789').success).toBe(false)
    expect(newPasswordSchema.safeParse('1234567890').success).toBe(true)
    expect(newPasswordSchema.safeParse('x'.repeat(201)).success).toBe(false)
  })
})
