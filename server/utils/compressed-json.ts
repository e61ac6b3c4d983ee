import { brotliCompressSync, constants, gzipSync } from 'node:zlib'
import Negotiator from 'negotiator'
import type { H3Event } from 'h3'

// negotiator 1.0 takes the server's order of preference; its published types (0.6) do not know the option yet.
interface PreferringNegotiator { encoding(available: string[], options: { preferred: string[] }): string | undefined }

// Below this, compressing saves less than it costs (a header and a few bytes of framing).
const SMALLEST = 1024

/**
 * The body as JSON, compressed with brotli or gzip when the client accepts it (its Accept-Encoding, q-values
 * honoured). For the tablet's large answers: static files are compressed at build, but a round's setup with its
 * sample lists (70 KB of JSON in the demo) crossed a rural link uncompressed, and names and codes compress
 * several-fold. Brotli at quality 5: a few ms of CPU for such an answer, most of the size gain of the top levels.
 * Only answers holding no secret that a request could probe by size (no tokens, no keys) are sent this way.
 */
export function compressedJson(event: H3Event, body: unknown): string | Buffer {
  const text = JSON.stringify(body)
  setResponseHeader(event, 'content-type', 'application/json; charset=utf-8')
  appendResponseHeader(event, 'vary', 'accept-encoding')
  if (Buffer.byteLength(text) < SMALLEST) return text
  const negotiator = new Negotiator({ headers: { 'accept-encoding': getRequestHeader(event, 'accept-encoding') ?? '' } }) as unknown as PreferringNegotiator
  // Among encodings the client values equally (browsers list gzip before br), ours: brotli is smaller.
  const encoding = negotiator.encoding(['br', 'gzip', 'identity'], { preferred: ['br', 'gzip', 'identity'] })
  if (encoding === 'br') {
    setResponseHeader(event, 'content-encoding', 'br')
    return brotliCompressSync(text, { params: { [constants.BROTLI_PARAM_QUALITY]: 5, [constants.BROTLI_PARAM_SIZE_HINT]: text.length } })
  }
  if (encoding === 'gzip') {
    setResponseHeader(event, 'content-encoding', 'gzip')
    return gzipSync(text, { level: 6 })
  }
  return text
}
