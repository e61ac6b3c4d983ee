import type { z } from 'zod'

// Text that a person typed, checked for encoding before it is stored anywhere. A lone UTF-16 surrogate cannot be
// written as UTF-8 (MariaDB stores it as "?" or the driver fails mid-batch), and NUL and the other C0 controls
// corrupt exports, logs and mail headers. Every schema that accepts free text runs it through safeText().

// A high surrogate not followed by a low one, or a low surrogate not preceded by a high one.
const LONE_SURROGATE = /[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/
// C0 controls and DEL; a single line allows none of them. (Matching control characters is the point here.)
// eslint-disable-next-line no-control-regex
const CONTROL_IN_LINE = /[\u0000-\u001F\u007F]/
// Several lines (reasons, notes, text answers) may also hold tab, line feed and carriage return.
// eslint-disable-next-line no-control-regex
const CONTROL_IN_TEXT = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\u007F]/
// U+FFFD is what a decoder leaves for bytes that were not UTF-8; U+FFFE and U+FFFF are non-characters.
const NON_CHARACTER = /[\uFFFD\uFFFE\uFFFF]/

export interface SafeTextOptions {
  /** Allow tab, line feed and carriage return (reasons, notes, text answers). Default: one line. */
  multiline?: boolean
}

/** Why a text is refused, or null when it is safe to store. Pure, so forms, routes and tests share it. */
export function unsafeTextProblem(text: string, options: SafeTextOptions = {}): string | null {
  if (LONE_SURROGATE.test(text) || NON_CHARACTER.test(text)) return 'Holds a character that cannot be stored (broken encoding); retype it'
  if (text.includes('\u0000')) return 'Holds a NUL character; retype it'
  if ((options.multiline ? CONTROL_IN_TEXT : CONTROL_IN_LINE).test(text)) {
    return options.multiline ? 'Holds a control character; retype it' : 'Use one line without control characters'
  }
  return null
}

export function isSafeText(text: string, options: SafeTextOptions = {}): boolean {
  return unsafeTextProblem(text, options) === null
}

/**
 * Adds the encoding check to a string schema (keeping its type, so .trim/.min/.max chain on as before):
 * `safeText(z.string().trim().min(1).max(120))`. The check runs after the schema's own trimming.
 */
export function safeText<T extends z.ZodString>(schema: T, options: SafeTextOptions = {}): T {
  return schema.superRefine((text, ctx) => {
    const problem = unsafeTextProblem(text, options)
    if (problem) ctx.addIssue({ code: 'custom', message: problem })
  }) as T
}

/** Names that collide with what every JavaScript object already has: refused as question keys and map keys. */
export const RESERVED_KEYS: ReadonlySet<string> = new Set([
  '__proto__', 'constructor', 'prototype', 'then', 'tostring', 'valueof', 'hasownproperty', 'isprototypeof',
  'propertyisenumerable', 'tolocalestring', '__definegetter__', '__definesetter__', '__lookupgetter__', '__lookupsetter__'
])

export function isReservedKey(key: string): boolean {
  return RESERVED_KEYS.has(key.toLowerCase()) || key in Object.prototype
}

/** An answer by question key, read only from the object's own keys (never from Object.prototype). */
export function ownValue<T = unknown>(record: Record<string, T> | null | undefined, key: string): T | undefined {
  return record && Object.hasOwn(record, key) ? record[key] : undefined
}
