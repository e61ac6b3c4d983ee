/**
 * Codes made from what a person types: "Heavy clay soil" → "heavy_clay_soil". Used for answer codes and question
 * codes in the builder, so nobody has to invent one; each stays editable.
 */
export function codeOf(label: string, max = 40): string {
  const code = label.normalize('NFKD').replace(/[\u0300-\u036F]/g, '').toLowerCase()
    .replace(/[^a-z0-9]+/g, '_').replace(/^_+|_+$/g, '').slice(0, max).replace(/_+$/, '')
  return code
}

/** A question code must start with a letter. */
export function questionCodeOf(label: string): string {
  const code = codeOf(label)
  return /^[a-z]/.test(code) ? code : `q_${code}`.slice(0, 40).replace(/_+$/, '')
}
