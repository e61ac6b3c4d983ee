import type { Question } from '#shared/utils/schemas/questionnaire'

const NAMES: Record<string, string> = {
  duplicateFarmCode: 'Farm code twice',
  farFromVillageKm: 'Far from village',
  edgeValues: 'Edge value',
  tooFastSeconds: 'Very fast',
  farmInOtherVillage: 'Farm of another village'
}

/** The short name of a quality flag for the table; an unknown flag reads as a plain "Other check". */
export function flagName(key: string): string {
  return NAMES[key] ?? 'Other check'
}

/** One sentence about a flag for the visit's panel, naming questions by their labels, never their keys. */
export function flagSentence(key: string, value: unknown, questions: Question[] | null): string {
  const label = (k: string) => questions?.find(q => q.key === k)?.label ?? k
  switch (key) {
    case 'duplicateFarmCode': return 'Farm code used twice in this round'
    case 'farFromVillageKm': return `GPS point ${value} km from the village centre`
    case 'edgeValues': return `At the edge of the range: ${(Array.isArray(value) ? value : [value]).map(v => label(String(v))).join(', ')}`
    case 'tooFastSeconds': return `Saved ${value} s after it started`
    case 'farmInOtherVillage': return `This farm code is registered in ${value}: not linked to that farm's earlier rounds. Correct the farm code if it was mistyped`
    default: return flagName(key)
  }
}
