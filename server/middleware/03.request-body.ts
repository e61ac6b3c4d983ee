import { jsonShapeProblem } from '../utils/json-shape'

// Every request body is read here, once, with its route's limit (server/utils/request-rules.ts), and handed to
// h3's readBody / readRawBody / readValidatedBody through the event, so no route can read an unbounded body.
// It runs after the deny-by-default check: a request that has no business here is refused unread.
export default defineEventHandler(async (event) => {
  if (!BODY_METHODS.has(event.method) || !hasBody(event)) return
  const rule = bodyRuleFor(event)
  const body = await readBodyWithin(event, rule.maxBytes, rule.message)
  // h3's readRawBody returns a Buffer kept here as it is (BodyInit's typing does not list Buffer).
  event._requestBody = body as unknown as BodyInit
  if (!rule.types.includes('application/json') || body.length === 0) return
  let text: string
  try {
    text = new TextDecoder('utf-8', { fatal: true }).decode(body)
  }
  catch {
    throw createError({ statusCode: 400, message: rule.notUtf8 ?? 'The request is not valid UTF-8 text.' })
  }
  const problem = jsonShapeProblem(text)
  if (problem) throw createError({ statusCode: 413, message: problem })
})
