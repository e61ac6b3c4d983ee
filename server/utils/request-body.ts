import type { H3Event } from 'h3'

/** Methods whose requests may carry a body (and may change something). */
export const BODY_METHODS = new Set(['POST', 'PUT', 'PATCH', 'DELETE'])

export function hasBody(event: H3Event) {
  const length = Number(getHeader(event, 'content-length') ?? 0)
  return length > 0 || getHeader(event, 'transfer-encoding') !== undefined
}

// After a 413 the rest of an upload is read and thrown away for a moment, so the client (still sending) can
// read the answer before the connection goes: closing a socket with unread data resets it, and the answer
// is lost (so no "Connection: close" either: Node would close at once). Until the answer is out nothing more is
// read; memory stays flat; past these bounds (counted from the moment the answer is out) the connection is cut.
// The byte bound is generous on purpose: at 8 MB a fast client on loopback was cut off (and its unread answer
// reset with it) in about one run of three of the 50 MB flood test; discarding costs no memory, and the time
// bound still ends any flood within 2 s.
const DRAIN_MAX_BYTES = 64 * 1024 * 1024
const DRAIN_MAX_MS = 2000

/**
 * Starts reading the body as soon as the request arrives (server/middleware/00.request-guard.ts), with its
 * route's limit, before any database work: a client that sends its whole body and hangs up at once has still
 * delivered it. server/middleware/03.request-body.ts awaits the result once the session has been checked.
 */
export function startReadingBody(event: H3Event) {
  if (!BODY_METHODS.has(event.method) || !hasBody(event)) return
  const rule = bodyRuleFor(event)
  const reading = readBodyWithin(event, rule.maxBytes, rule.message)
  // Awaited later, or never (a request refused first): an unawaited refusal must not count as unhandled.
  reading.catch(() => {})
  event.context.bodyReading = reading
}

/** The body read by startReadingBody (its 413 or 400 thrown here), or undefined for a request without one. */
export function bodyRead(event: H3Event): Promise<Buffer> | undefined {
  return event.context.bodyReading as Promise<Buffer> | undefined
}

/**
 * Reads the request body into memory with a size limit, counting while it streams: a declared length over
 * the limit is refused before a byte is read, and a chunked body as soon as its count passes the limit.
 */
export async function readBodyWithin(event: H3Event, maxBytes: number, message: string): Promise<Buffer> {
  const req = event.node.req
  const tooLarge = () => {
    drainThenClose(event)
    return createError({ statusCode: 413, message })
  }
  if (Number(getHeader(event, 'content-length') ?? 0) > maxBytes) throw tooLarge()
  // A client that sent a short body and left before it was read: Node has destroyed the request with the body still
  // in its buffer, and no 'data', 'end' or 'close' will come. Answer at once (nobody reads it) instead of waiting for
  // events that never fire, which held the request, its sync slot and its memory until the server stopped.
  if (req.destroyed) throw createError({ statusCode: 400, message: 'The request was cut off before its end.' })
  return new Promise<Buffer>((resolve, reject) => {
    const chunks: Buffer[] = []
    let size = 0
    const onData = (chunk: Buffer) => {
      size += chunk.length
      if (size <= maxBytes) return void chunks.push(chunk)
      req.off('data', onData)
      req.off('end', onEnd)
      chunks.length = 0
      reject(tooLarge())
    }
    const onEnd = () => resolve(Buffer.concat(chunks, size))
    req.on('data', onData)
    req.once('end', onEnd)
    req.once('error', reject)
    // A client that gives up halfway: nothing half-read is ever handed to a route.
    req.once('close', () => {
      if (!req.complete) reject(createError({ statusCode: 400, message: 'The request was cut off before its end.' }))
    })
  })
}

function drainThenClose(event: H3Event) {
  const req = event.node.req
  const socket = req.socket
  // Until the answer is out, read nothing more (the client waits on TCP back-pressure); then drain a while.
  req.pause()
  event.node.res.once('finish', () => {
    let drained = 0
    const cut = () => socket.destroy()
    const timer = setTimeout(cut, DRAIN_MAX_MS)
    timer.unref()
    req.on('data', (chunk: Buffer) => {
      drained += chunk.length
      if (drained > DRAIN_MAX_BYTES) cut()
    })
    req.once('end', () => clearTimeout(timer))
    socket.once('close', () => clearTimeout(timer))
    req.resume()
  })
}
