import { jsonShapeProblem } from '../utils/json-shape'

// Every request body is read once, with its route's limit (server/utils/request-rules.ts; the reading starts in
// 00.request-guard.ts), and handed to h3's readBody / readRawBody / readValidatedBody through the event here,
// after the deny-by-default check, so no route can read an unbounded body.
export default defineEventHandler(async (event) => {
  const reading = bodyRead(event)
  if (!reading) return
  const rule = bodyRuleFor(event)
  const body = await reading
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
