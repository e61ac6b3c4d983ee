import type { H3Event } from 'h3'

/** The body limit of every route that does not name its own: ample for any form of the product. */
export const JSON_BODY_MAX_BYTES = 1024 * 1024

export interface BodyRule {
  /** Largest body in bytes; the reader stops and answers 413 as soon as a body passes it. */
  maxBytes: number
  /** The content types the route takes (the first part of Content-Type, lower case). */
  types: readonly string[]
  message: string
  /** What to say when a JSON body's bytes are not UTF-8. */
  notUtf8?: string
}

const JSON_TYPES = ['application/json'] as const
const importTooLarge = `The file is larger than the ${IMPORT_MAX_BYTES / 1024 / 1024} MB limit for an import. Split it into smaller files and import them one by one.`

// Routes with their own limit or body type. Everything else is JSON up to JSON_BODY_MAX_BYTES; the unit test
// tests/unit/route-guards.test.ts checks that each pattern here matches a route file.
const RULES: Array<{ method: string, path: RegExp, rule: () => BodyRule }> = [
  {
    method: 'POST',
    path: /^\/api\/sync\/visits$/,
    rule: () => ({ maxBytes: SYNC_BODY_MAX_BYTES, types: JSON_TYPES, message: `Send at most ${SYNC_BATCH_MAX} visits (4 MB) per batch.` })
  },
  {
    method: 'POST',
    path: /^\/api\/rounds\/[^/]+\/imports(\/preview)?$/,
    rule: () => ({
      maxBytes: IMPORT_BODY_MAX_BYTES,
      types: JSON_TYPES,
      message: importTooLarge,
      notUtf8: 'The file is not in UTF-8. Save it again with the UTF-8 encoding and choose it again.'
    })
  },
  {
    method: 'PUT',
    path: /^\/api\/photos\/[^/]+$/,
    rule: () => {
      const limit = serverConfig().PHOTO_MAX_BYTES
      return { maxBytes: limit, types: Object.keys(PHOTO_TYPES), message: `The photo is larger than ${Math.round(limit / 1024)} KB; resize it first.` }
    }
  }
]

export const ROUTES_WITH_OWN_BODY_RULES = RULES.map(r => `${r.method} ${r.path.source}`)

export function bodyRuleFor(event: H3Event): BodyRule {
  const path = event.path.split('?')[0]!
  const own = RULES.find(r => r.method === event.method && r.path.test(path))
  return own?.rule() ?? { maxBytes: JSON_BODY_MAX_BYTES, types: JSON_TYPES, message: `The request is larger than ${JSON_BODY_MAX_BYTES / 1024 / 1024} MB.` }
}
