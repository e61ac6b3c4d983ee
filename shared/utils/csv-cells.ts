// Spreadsheet programs run a cell that starts with = + - @ (and, in some, tab or carriage return) as a formula,
// so a farmer's answer "=HYPERLINK(…)" in an export would become a live link or command. Every CSV Furrowcast
// writes passes its cells through neutraliseCsvCell (OWASP's "CSV injection" advice: prefix a single quote).

const FORMULA_START = /^[=+\-@\t\r]/
// A plain decimal number ("-2.5", "+3", "1e-4") is read as a number by every spreadsheet and cannot carry a formula:
// it stays as it is, so negative numbers (coefficients, a re-importable rejected row) keep their meaning.
const PLAIN_NUMBER = /^[-+]?(\d+(\.\d*)?|\.\d+)([eE][-+]?\d+)?$/

/** One cell's text with formulas neutralised: numbers as they are, text that a spreadsheet would run prefixed with '. */
export function neutraliseCsvCell(value: unknown): string {
  if (value === null || value === undefined) return ''
  if (typeof value === 'number' || typeof value === 'bigint') return String(value)
  const text = String(value)
  if (!FORMULA_START.test(text) || PLAIN_NUMBER.test(text)) return text
  return `'${text}`
}
