import type { CreationAttributes, Transaction } from 'sequelize'
import { SampleFarm, SampleVillage } from '../models'

// The demo round's sample lists, invented like the rest of the demo: every visited farm is on its village's list.
// Some villages had refusals or nobody at home, each replaced by the next replacement by rank (those replacements are
// the visited farms with the highest numbers); the enumerator's villages also keep two main-sample farms still to
// visit and two replacements not needed yet. Farms listed and the chance each village was drawn are made up.

const SYLLABLES = ['ka', 'lo', 'mi', 'nu', 'ra', 'se', 'ti', 'wa', 'do', 'fe', 'ga', 'ho', 'ju', 'be', 'zi', 'po']
const HINTS = [
  'Green iron roof past the water point', 'Behind the grinding mill', 'Third homestead after the school gate',
  'By the two mango trees on the hill path', 'Across the footbridge, first house on the left', 'Near the cattle dip',
  'Red door beside the market shelter', 'End of the track past the church'
]
const NOTES = {
  refused: 'The head declined: busy with the harvest this week.',
  absent: 'Nobody at home on two calls, neighbours say the family is away for a funeral.'
}

function nameOf(i: number): string {
  const s = (k: number) => SYLLABLES[(i * 7 + k * 5) % SYLLABLES.length]!
  const cap = (t: string) => t[0]!.toUpperCase() + t.slice(1)
  return `${cap(s(1) + s(2) + s(3))} ${cap(s(4) + s(5))}`
}

export interface DemoSampleInput {
  organisationId: number
  roundId: number
  villages: Array<{ id: number, code: string }>
  /** Farm codes of the round's visits by village index. */
  visitCodes: string[][]
  assigned: readonly number[]
}

export async function seedDemoSample(input: DemoSampleInput, transaction: Transaction): Promise<void> {
  const farms: Array<CreationAttributes<SampleFarm>> = []
  const designs: Array<CreationAttributes<SampleVillage>> = []
  let person = 0
  input.villages.forEach((village, i) => {
    const visited = [...input.visitCodes[i]!].sort()
    const missed = i % 4 === 0 ? 1 : i % 5 === 2 ? 2 : 0
    const replacements = visited.slice(visited.length - missed)
    const mainVisited = visited.slice(0, visited.length - missed)
    const base = { organisationId: input.organisationId, roundId: input.roundId, villageId: village.id, lat: null, lon: null, outcomeBy: null }
    const farm = (farmCode: string, rank: number, extra: Partial<CreationAttributes<SampleFarm>> = {}) => {
      person++
      farms.push({ ...base, farmCode, sampleRank: rank, headName: nameOf(person), hint: HINTS[person % HINTS.length]!, outcome: null, outcomeNote: null, replacedBy: null, outcomeAt: null, ...extra })
    }
    for (const code of mainVisited) farm(code, 0)
    for (let k = 0; k < missed; k++) {
      const outcome = k === 0 ? 'refused' : 'absent'
      farm(`${village.code}-${900 + k + 1}`, 0, { outcome, outcomeNote: NOTES[outcome], replacedBy: replacements[k]!, outcomeAt: new Date('2026-10-20T09:00:00Z') })
    }
    replacements.forEach((code, k) => farm(code, k + 1))
    if (input.assigned.includes(i)) {
      farm(`${village.code}-${950}`, 0)
      farm(`${village.code}-${951}`, 0)
      farm(`${village.code}-${960}`, missed + 1)
      farm(`${village.code}-${961}`, missed + 2)
    }
    const main = mainVisited.length + missed + (input.assigned.includes(i) ? 2 : 0)
    designs.push({
      organisationId: input.organisationId,
      roundId: input.roundId,
      villageId: village.id,
      listedFarms: main * 4 + 15 + ((i * 7) % 13),
      selectionProbability: Math.round((0.25 + 0.5 * ((i * 0.37) % 1)) * 1000) / 1000,
      updatedBy: null
    })
  })
  await SampleVillage.bulkCreate(designs, { transaction })
  for (let i = 0; i < farms.length; i += 500) await SampleFarm.bulkCreate(farms.slice(i, i + 500), { transaction })
}
