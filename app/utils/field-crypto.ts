// WebCrypto pieces of the tablet's encrypted store: a random AES-GCM data key seals every record; the data key
// is kept only wrapped, by a key stretched from the enumerator's PIN and by the server's escrow key.
//
// Stretching: PBKDF2-HMAC-SHA-256 with 600,000 iterations (the count OWASP's password storage guidance gives for
// this hash; recalled from memory). PBKDF2 is built into WebCrypto on every tablet browser, so the first load stays
// small and no package is needed; scrypt would resist GPUs better but needs a library. A short PIN cannot stand up
// to an offline guess on its own: the stretching buys time, the step-by-step delay slows guessing in the app, and
// an admin's revocation refuses the escrow key and erases the store at the tablet's next contact.

export const PBKDF2_ITERATIONS = 600_000
const IV_BYTES = 12
const BLOB_TAG = '__furrowcastBlob'

const subtle = () => globalThis.crypto.subtle

export function randomBytes(n: number): Uint8Array<ArrayBuffer> {
  return globalThis.crypto.getRandomValues(new Uint8Array(n))
}

export const toBase64 = (bytes: Uint8Array) => btoa(String.fromCharCode(...bytes))
export const fromBase64 = (text: string) => Uint8Array.from(atob(text), c => c.charCodeAt(0))

/** A fresh data key. Extractable only so that it can be wrapped again under a new PIN; it never leaves memory unwrapped. */
export function newDataKey(): Promise<CryptoKey> {
  return subtle().generateKey({ name: 'AES-GCM', length: 256 }, true, ['encrypt', 'decrypt'])
}

export async function pinKey(pin: string, salt: Uint8Array<ArrayBuffer>, iterations = PBKDF2_ITERATIONS): Promise<CryptoKey> {
  const material = await subtle().importKey('raw', new TextEncoder().encode(pin), 'PBKDF2', false, ['deriveKey'])
  return subtle().deriveKey({ name: 'PBKDF2', hash: 'SHA-256', salt, iterations }, material, { name: 'AES-GCM', length: 256 }, false, ['wrapKey', 'unwrapKey'])
}

export function escrowKey(base64: string): Promise<CryptoKey> {
  return subtle().importKey('raw', fromBase64(base64), { name: 'AES-GCM' }, false, ['wrapKey', 'unwrapKey'])
}

/** The data key wrapped by `wrapping` (AES-GCM, so a wrong PIN fails the tag check rather than giving a wrong key). */
export async function wrapDataKey(dataKey: CryptoKey, wrapping: CryptoKey): Promise<string> {
  const iv = randomBytes(IV_BYTES)
  const wrapped = new Uint8Array(await subtle().wrapKey('raw', dataKey, wrapping, { name: 'AES-GCM', iv }))
  return toBase64(concat([iv, wrapped]))
}

/** Throws when `wrapping` is not the key the data key was wrapped with (a wrong PIN). */
export async function unwrapDataKey(wrapped: string, wrapping: CryptoKey): Promise<CryptoKey> {
  const bytes = fromBase64(wrapped)
  return subtle().unwrapKey('raw', bytes.subarray(IV_BYTES), wrapping, { name: 'AES-GCM', iv: bytes.slice(0, IV_BYTES) },
    { name: 'AES-GCM', length: 256 }, true, ['encrypt', 'decrypt'])
}

function concat(parts: Uint8Array[]): Uint8Array<ArrayBuffer> {
  const out = new Uint8Array(parts.reduce((n, p) => n + p.length, 0))
  let at = 0
  for (const p of parts) {
    out.set(p, at)
    at += p.length
  }
  return out
}

const u32 = (n: number) => {
  const b = new Uint8Array(4)
  new DataView(b.buffer).setUint32(0, n)
  return b
}

/**
 * A record as bytes: its JSON (Blobs replaced by a tag), then each Blob's bytes. Records hold JSON-like values and
 * Blobs (photos) only, so nothing is lost; a length before each part lets the reader split them.
 */
export async function encodeRecord(value: unknown): Promise<Uint8Array<ArrayBuffer>> {
  const blobs: Blob[] = []
  const collect = (v: unknown) => {
    if (v instanceof Blob) blobs.push(v)
    else if (v && typeof v === 'object') for (const inner of Object.values(v)) collect(inner)
  }
  collect(value)
  const contents = await Promise.all(blobs.map(async b => new Uint8Array(await b.arrayBuffer())))
  const json = new TextEncoder().encode(JSON.stringify(value, (_key, v: unknown) => v instanceof Blob ? { [BLOB_TAG]: blobs.indexOf(v), type: v.type } : v))
  return concat([u32(json.length), json, ...contents.flatMap(c => [u32(c.length), c])])
}

export function decodeRecord(bytes: Uint8Array): unknown {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength)
  const jsonLength = view.getUint32(0)
  const json = new TextDecoder().decode(bytes.subarray(4, 4 + jsonLength))
  const contents: Uint8Array<ArrayBuffer>[] = []
  for (let at = 4 + jsonLength; at < bytes.length;) {
    const n = view.getUint32(at)
    contents.push(bytes.slice(at + 4, at + 4 + n))
    at += 4 + n
  }
  return JSON.parse(json, (_key, v: unknown) => {
    if (v && typeof v === 'object' && BLOB_TAG in v) {
      const tag = v as { [BLOB_TAG]: number, type: string }
      return new Blob([contents[tag[BLOB_TAG]]!], { type: tag.type })
    }
    return v
  })
}

export async function seal(key: CryptoKey, value: unknown): Promise<Uint8Array<ArrayBuffer>> {
  const iv = randomBytes(IV_BYTES)
  const sealed = new Uint8Array(await subtle().encrypt({ name: 'AES-GCM', iv }, key, await encodeRecord(value)))
  return concat([iv, sealed])
}

export async function unseal(key: CryptoKey, bytes: Uint8Array): Promise<unknown> {
  const clear = await subtle().decrypt({ name: 'AES-GCM', iv: bytes.slice(0, IV_BYTES) }, key, bytes.slice(IV_BYTES))
  return decodeRecord(new Uint8Array(clear))
}
