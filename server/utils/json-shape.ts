/** Limits on the shape of every JSON body, checked on the text before it is parsed. */
export const JSON_MAX_DEPTH = 32
export const JSON_MAX_ARRAY_ITEMS = 10_000

/**
 * Scans JSON text once, without parsing it, and names the first limit it breaks: nesting deeper than
 * `maxDepth` or an array of more than `maxArrayItems` items. Deeply nested or huge arrays cost the parser
 * and every validator after it; no form of the product sends either. Returns null for a shape within the
 * limits (the text may still be invalid JSON: the parser says so afterwards).
 */
export function jsonShapeProblem(text: string, maxDepth = JSON_MAX_DEPTH, maxArrayItems = JSON_MAX_ARRAY_ITEMS): string | null {
  // One counter per open bracket: the items seen so far for an array, -1 for an object.
  const open: number[] = []
  let inString = false
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i)
    if (inString) {
      if (c === 92) i++ // backslash: skip the escaped character
      else if (c === 34) inString = false
      continue
    }
    if (c === 34) {
      inString = true
      if (open.at(-1) === 0) open[open.length - 1] = 1
    }
    else if (c === 91 || c === 123) { // [ {
      if (open.at(-1) === 0) open[open.length - 1] = 1
      open.push(c === 91 ? 0 : -1)
      if (open.length > maxDepth) return `The request is nested more than ${maxDepth} levels deep.`
    }
    else if (c === 93 || c === 125) open.pop() // ] }
    else if (c === 44) { // ,
      const top = open.length - 1
      if (top >= 0 && open[top]! >= 0 && ++open[top]! > maxArrayItems) return `A list in the request has more than ${maxArrayItems} items.`
    }
    else if (c > 32 && open.at(-1) === 0) open[open.length - 1] = 1
  }
  return null
}
