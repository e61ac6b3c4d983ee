import commonPasswords from '../data/common-passwords.json'

// server/data/common-passwords.json: the first 1,000 entries of the "10k most common" list shipped in the npm
// package common-password 0.1.2 (ISC licence), plus every entry of that list with 10 or more characters,
// lower-cased. Only the server checks it, so the list never reaches the browser.
const COMMON = new Set<string>(commonPasswords)

export const MIN_PASSWORD_LENGTH = 10

/** Why a new password is refused, or null if it is acceptable. Length is also checked by the shared schema. */
export function passwordProblem(password: string, email?: string): string | null {
  if (password.length < MIN_PASSWORD_LENGTH) return `Use at least ${MIN_PASSWORD_LENGTH} characters.`
  const lower = password.toLowerCase()
  // "password2026!" is as easy to guess as "password": strip trailing digits and punctuation too.
  const stem = lower.replace(/[\d\W_]+$/u, '')
  if (COMMON.has(lower) || (stem.length >= 4 && COMMON.has(stem))) {
    return 'This password is one of the most common ones. Choose something less easy to guess, such as a few unrelated words.'
  }
  if (new Set(password).size <= 2) return 'Use more than two different characters.'
  const localPart = email?.split('@')[0]?.toLowerCase()
  if (localPart && localPart.length >= 4 && lower.includes(localPart)) return 'Do not use your e-mail address in your password.'
  return null
}
