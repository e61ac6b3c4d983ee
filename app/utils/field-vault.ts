import Dexie from 'dexie'
import type { DeviceRegistration } from '#shared/types/field-device'
import type { DeviceState } from '#shared/utils/schemas/field-device'
import { PBKDF2_ITERATIONS, escrowKey, fromBase64, newDataKey, pinKey, randomBytes, toBase64, unwrapDataKey, wrapDataKey } from './field-crypto'
import { closeFieldDb, fieldDb, fieldDbName } from './field-db'
import { lockVault, openKeyOf, setOpenKey } from './field-keys'

// The key to one person's field store on this tablet. Kept in localStorage (it holds no farm data): the device id
// and status token the server gave, the data key wrapped twice (by the PIN, and by the server's escrow key for a
// forgotten PIN), and the count of wrong PINs with the time the next try is allowed, so a reload cannot reset the
// delay. The unwrapped data key lives only in this page's memory, until the tablet locks or signs out.

export interface VaultMeta {
  v: 1
  deviceId: string
  token: string
  salt: string
  iterations: number
  byPin: string
  byEscrow: string
  failures: number
  retryAt: number
  /** Records written before encryption have been sealed. */
  migrated: boolean
}

export const PIN_MIN_LENGTH = 6
const metaKey = (userId: number) => `furrowcast:field-vault:${userId}`

export class WrongPinError extends Error {
  constructor(public readonly failures: number, public readonly retryAt: number) {
    super('That PIN is not right.')
    this.name = 'WrongPinError'
  }
}

export class TooSoonError extends Error {
  constructor(public readonly retryAt: number) {
    super('Wait before trying another PIN.')
    this.name = 'TooSoonError'
  }
}

/**
 * The wait after the nth wrong PIN in a row: none after the first, then 5 s, 10 s, 20 s … doubling up to 15 minutes.
 * Wrong PINs never erase anything: unsynced visits are worth more than the delay a thief would save.
 */
export function delayAfter(failures: number): number {
  return failures <= 1 ? 0 : Math.min(15 * 60_000, 5_000 * 2 ** (failures - 2))
}

export function vaultMeta(userId: number): VaultMeta | null {
  const raw = localStorage.getItem(metaKey(userId))
  if (!raw) return null
  try {
    const meta = JSON.parse(raw) as VaultMeta
    return meta.v === 1 ? meta : null
  }
  catch {
    return null
  }
}

const saveMeta = (userId: number, meta: VaultMeta) => localStorage.setItem(metaKey(userId), JSON.stringify(meta))

export function isOpen(userId: number): boolean {
  return openKeyOf(userId) !== null
}

export function checkPinShape(pin: string): string | null {
  if (pin.length < PIN_MIN_LENGTH) return `Use at least ${PIN_MIN_LENGTH} digits or characters.`
  if (/^(\d)\1+$/.test(pin) || '0123456789012345'.includes(pin) || '9876543210987654'.includes(pin)) return 'Choose a PIN that is harder to guess than a repeated or running sequence.'
  return null
}

/** First set-up, online (after a sign-in): registers the tablet, makes the data key and seals what is already stored. */
export async function setUpVault(userId: number, pin: string): Promise<void> {
  const salt = randomBytes(16)
  // The registration's round trip and the PIN's key stretching (hundreds of ms of CPU) run side by side.
  const [registration, byPinKey, dataKey] = await Promise.all([
    $fetch<DeviceRegistration>('/api/field/devices', { method: 'POST' }), pinKey(pin, salt), newDataKey()
  ])
  const meta: VaultMeta = {
    v: 1,
    deviceId: registration.deviceId,
    token: registration.token,
    salt: toBase64(salt),
    iterations: PBKDF2_ITERATIONS,
    byPin: await wrapDataKey(dataKey, byPinKey),
    byEscrow: await wrapDataKey(dataKey, await escrowKey(registration.escrowKey)),
    failures: 0,
    retryAt: 0,
    migrated: false
  }
  saveMeta(userId, meta)
  clearErased(userId)
  setOpenKey(userId, dataKey)
  await sealPlainRecords(userId)
}

/** Unlocks with the PIN, offline too. A wrong PIN counts, persisted, and sets the time of the next allowed try. */
export async function unlockVault(userId: number, pin: string, now = Date.now()): Promise<void> {
  const meta = vaultMeta(userId)
  if (!meta) throw new Error('This tablet has no PIN yet.')
  if (meta.retryAt > now) throw new TooSoonError(meta.retryAt)
  let dataKey: CryptoKey
  try {
    dataKey = await unwrapDataKey(meta.byPin, await pinKey(pin, fromBase64(meta.salt), meta.iterations))
  }
  catch {
    const failures = meta.failures + 1
    const delay = delayAfter(failures)
    const retryAt = delay ? Date.now() + delay : 0
    saveMeta(userId, { ...meta, failures, retryAt })
    throw new WrongPinError(failures, retryAt)
  }
  saveMeta(userId, { ...meta, failures: 0, retryAt: 0 })
  setOpenKey(userId, dataKey)
  await sealPlainRecords(userId)
}

/**
 * Forgotten PIN: with a live session (an online sign-in with the password), the server releases this tablet's
 * escrow key to its owner, unless an admin revoked the tablet; the data key is unwrapped with it and wrapped again
 * under the new PIN. Without that, the store stays closed: nothing is erased.
 */
export async function replacePin(userId: number, newPin: string): Promise<void> {
  const meta = vaultMeta(userId)
  if (!meta) throw new Error('This tablet has no PIN yet.')
  const { escrowKey: released } = await $fetch<{ escrowKey: string }>(`/api/field/devices/${meta.deviceId}/key`, { method: 'POST' })
  const dataKey = await unwrapDataKey(meta.byEscrow, await escrowKey(released))
  const salt = randomBytes(16)
  saveMeta(userId, { ...meta, salt: toBase64(salt), iterations: PBKDF2_ITERATIONS, byPin: await wrapDataKey(dataKey, await pinKey(newPin, salt)), failures: 0, retryAt: 0 })
  setOpenKey(userId, dataKey)
}

/** Asks the server whether an admin revoked this tablet; null when it cannot be reached. */
export async function deviceStateOf(userId: number): Promise<DeviceState | null> {
  const meta = vaultMeta(userId)
  if (!meta) return null
  try {
    const answer = await $fetch<{ state: DeviceState }>('/api/field/devices/status', { method: 'POST', body: { deviceId: meta.deviceId, token: meta.token } })
    return answer.state
  }
  catch {
    return null
  }
}

const erasedKey = (userId: number) => `furrowcast:field-withdrawn:${userId}`

/** A revoked tablet: the whole local store and its key go (no PIN needed: the records are deleted, not read). */
export async function eraseLocalStore(userId: number): Promise<void> {
  lockVault(userId)
  closeFieldDb(userId)
  await Dexie.delete(fieldDbName(userId))
  localStorage.removeItem(metaKey(userId))
  // Remembered (a date only) so that the owner, at the next sign-in, is told why the tablet is empty.
  localStorage.setItem(erasedKey(userId), new Date().toISOString())
}

export function wasErased(userId: number): boolean {
  return localStorage.getItem(erasedKey(userId)) !== null
}

export function clearErased(userId: number) {
  localStorage.removeItem(erasedKey(userId))
}

/**
 * Every store on this tablet asks whether its device was revoked, signed in or not: a revocation ends the owner's
 * sessions, so the app must not wait for a signed-in page to erase. Returns the people whose stores were erased.
 */
export async function sweepRevokedStores(): Promise<number[]> {
  const owners = Object.keys(localStorage).flatMap(k => /^furrowcast:field-vault:(\d+)$/.exec(k)?.[1] ?? []).map(Number)
  const erased: number[] = []
  for (const userId of owners) {
    if ((await deviceStateOf(userId)) !== 'revoked') continue
    await eraseLocalStore(userId)
    erased.push(userId)
  }
  return erased
}

/** Seals the records written by the app before encryption (once, on the first unlock after the update). */
async function sealPlainRecords(userId: number) {
  const meta = vaultMeta(userId)
  if (!meta || meta.migrated) return
  const db = fieldDb(userId)
  for (const table of db.tables) {
    // Read through the sealing layer (plain records come back as they are) and write everything back sealed.
    const rows = await table.toArray()
    if (rows.length) await table.bulkPut(rows)
  }
  saveMeta(userId, { ...meta, migrated: true })
}
