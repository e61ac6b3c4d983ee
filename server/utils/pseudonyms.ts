import { createHmac } from 'node:crypto'

// Farm pseudonyms: HMAC-SHA256 under a key per organisation, derived from a secret that lives in the server's
// environment and never in the database. The same farm code gives the same pseudonym in every export of the
// organisation (analysts can still follow a farm across rounds), and nobody holding only a database dump or an
// export can compute a pseudonym from a guessed farm code.

function secret(): string {
  const config = serverConfig()
  if (config.PSEUDONYM_SECRET) return config.PSEUDONYM_SECRET
  const session = process.env.NUXT_SESSION_PASSWORD
  if (!session) throw new Error('Set PSEUDONYM_SECRET (or NUXT_SESSION_PASSWORD) to make farm pseudonyms')
  return createHmac('sha256', session).update('furrowcast farm pseudonyms').digest('hex')
}

const keys = new Map<number, Buffer>()

function organisationKey(organisationId: number): Buffer {
  let key = keys.get(organisationId)
  if (!key) {
    key = createHmac('sha256', secret()).update(`organisation:${organisationId}`).digest()
    keys.set(organisationId, key)
  }
  return key
}

/** Farm codes are matched without regard to case or surrounding spaces, as the database's collation does. */
export function normalisedFarmCode(farmCode: string): string {
  return farmCode.trim().toLowerCase()
}

/** The farm's pseudonym in exports: `P-` and 12 hex digits (48 bits: no collision to expect among a programme's farms). */
export function pseudonymOf(organisationId: number, farmCode: string): string {
  return `P-${createHmac('sha256', organisationKey(organisationId)).update(`pseudonym:${normalisedFarmCode(farmCode)}`).digest('hex').slice(0, 12)}`
}

/** The key an erasure keeps of the farm code (full 256 bits, another purpose string than the pseudonym). */
export function farmKeyOf(organisationId: number, farmCode: string): string {
  return createHmac('sha256', organisationKey(organisationId)).update(`erased-farm:${normalisedFarmCode(farmCode)}`).digest('hex')
}
