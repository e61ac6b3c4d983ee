// What a photo really is, read from its first bytes (the file signatures of the three formats), never from the
// type the client declares: an HTML page sent as image/jpeg must not be stored and served back.

export type PhotoType = 'image/jpeg' | 'image/png' | 'image/webp'

const startsWith = (bytes: Uint8Array, signature: readonly number[], at = 0) =>
  bytes.length >= at + signature.length && signature.every((b, i) => bytes[at + i] === b)

/** The photo type the bytes carry (JPEG SOI marker, PNG signature, RIFF…WEBP), or null for anything else. */
export function photoTypeOf(bytes: Uint8Array): PhotoType | null {
  if (startsWith(bytes, [0xFF, 0xD8, 0xFF])) return 'image/jpeg'
  if (startsWith(bytes, [0x89, 0x50, 0x4E, 0x47, 0x0D, 0x0A, 0x1A, 0x0A])) return 'image/png'
  if (startsWith(bytes, [0x52, 0x49, 0x46, 0x46]) && startsWith(bytes, [0x57, 0x45, 0x42, 0x50], 8)) return 'image/webp'
  return null
}
