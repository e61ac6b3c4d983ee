import { createHash } from 'node:crypto'
import type { AnswerCheck } from '../../../shared/utils/schemas/checks'
import { type Question, outcomeQuestion } from '../../../shared/utils/schemas/questionnaire'
import { intrinsicFlags } from '../../utils/visit-flags'
import { normal, prng } from '../../../shared/utils/random/prng'

// The demo round's data, generated from a known probit model with a village random effect.
// Deterministic: the same seed gives the same villages and visits. The true coefficients are in README.md.

export const DEMO_SEED = 20261124
export const DEMO_TECHNOLOGY = 'drought-tolerant sorghum seed (Ombara Gold)'
export const DEMO_VISITS = 1500

/** True coefficients of the latent index; y* = x'β + u_village + ε, ε ~ N(0, 1), adopted = y* > 0. */
export const TRUE_BETA = {
  intercept: -0.6,
  farm_size_ha: 0.12,
  household_size: 0.03,
  schooling_years: 0.06,
  age_head: -0.012,
  female_head: -0.25,
  dealer_distance_km: -0.045,
  extension_contact: 0.45,
  credit_access: 0.35,
  group_member: 0.3,
  livestock_tlu: 0.05,
  owns_phone: 0.2
} as const
export const VILLAGE_EFFECT_SD = 0.35

const VILLAGE_NAMES = [
  'Anvira', 'Belmazi', 'Chitoro', 'Dumbeni', 'Eshari Ford', 'Fulavo', 'Gorombe', 'Haleka', 'Isungwe', 'Jorandi Ridge',
  'Kavumbo', 'Lethiwe', 'Marosenga', 'Nkelani', 'Obiriva', 'Pembuka', 'Quelani Springs', 'Rosimbe', 'Saluvo', 'Tembwari',
  'Umbaleni', 'Vitondo', 'Wasekere', 'Yelunga'
]

/** An invented place: a district centre and villages scattered within about 30 km of it. */
const DISTRICT_CENTRE = { lat: -13.42, lon: 31.87 }

const clip = (v: number, lo: number, hi: number) => Math.min(hi, Math.max(lo, v))
const round1 = (v: number) => Math.round(v * 10) / 10

function uuidFrom(u: () => number): string {
  const hex = Array.from({ length: 32 }, () => Math.floor(u() * 16).toString(16))
  hex[12] = '4'
  hex[16] = '89ab'[Math.floor(u() * 4)]!
  const s = hex.join('')
  return `${s.slice(0, 8)}-${s.slice(8, 12)}-${s.slice(12, 16)}-${s.slice(16, 20)}-${s.slice(20)}`
}

/** The demo's one check across answers: schooling cannot reach the head's age. */
export function demoChecks(): AnswerCheck[] {
  return [{ question: 'schooling_years', test: 'less_than', against: { question: 'age_head' }, message: 'Years of schooling must be fewer than the head\'s age: check both answers with the farmer.' }]
}

export function demoQuestions(): Question[] {
  return [
    outcomeQuestion(DEMO_TECHNOLOGY),
    { key: 'farm_size_ha', label: 'Farm size', help: 'All land the household cultivates this season.', type: 'number', unit: 'ha', min: 0, max: 100, required: true },
    { key: 'household_size', label: 'Household size', help: 'People who eat from the same pot.', type: 'whole', unit: 'people', min: 1, max: 40, required: true },
    { key: 'schooling_years', label: 'Years of schooling of the household head', type: 'whole', unit: 'years', min: 0, max: 25, required: true },
    { key: 'age_head', label: 'Age of the household head', type: 'whole', unit: 'years', min: 15, max: 100, required: true },
    { key: 'female_head', label: 'Is the household headed by a woman?', type: 'yesno', required: true },
    { key: 'dealer_distance_km', label: 'Distance to the nearest input dealer', type: 'number', unit: 'km', min: 0, max: 150, required: true },
    { key: 'extension_contact', label: 'Contact with an extension officer last season?', type: 'yesno', required: true },
    { key: 'credit_access', label: 'Access to credit this season?', type: 'yesno', required: true },
    { key: 'group_member', label: 'Member of a farmer group?', type: 'yesno', required: true },
    { key: 'livestock_tlu', label: 'Livestock owned', help: 'In tropical livestock units (a cow is 0.7, a goat 0.1).', type: 'number', unit: 'TLU', min: 0, max: 200, required: true },
    { key: 'owns_phone', label: 'Does someone in the household own a mobile phone?', type: 'yesno', required: true },
    // Asked only of households with credit: the others' visits store it as "not asked".
    {
      key: 'credit_source', label: 'Where does the credit come from?', type: 'choice', required: true,
      options: CREDIT_SOURCES.map(([value, label]) => ({ value, label })),
      askWhen: { join: 'all', tests: [{ question: 'credit_access', test: 'equals', value: true }] }
    },
    {
      key: 'heard_from', label: 'Where did the household hear of the seed?', help: 'Tick every source the farmer names.', type: 'several', required: false,
      options: HEARD_FROM.map(([value, label]) => ({ value, label }))
    }
  ]
}

const CREDIT_SOURCES = [['savings_group', 'Village savings group'], ['dealer_credit', 'Input dealer on credit'], ['microlender', 'Microfinance lender'], ['relative', 'Relative or friend']] as const
const HEARD_FROM = [['radio', 'Radio programme'], ['neighbour', 'A neighbour'], ['extension_officer', 'Extension officer'], ['dealer', 'Input dealer'], ['field_day', 'Field day']] as const

export interface DemoVillage { code: string, name: string, centreLat: number, centreLon: number, dealerKm: number, effect: number }

export interface DemoVisit {
  id: string
  villageIndex: number
  farmCode: string
  lat: number
  lon: number
  accuracyM: number
  answers: Record<string, number | boolean | string | string[]>
  startedAt: Date
  savedAt: Date
  adopted: 0 | 1
  flags: ReturnType<typeof intrinsicFlags>
  deviceHash: string
}

export function generateDemo(seed = DEMO_SEED, n = DEMO_VISITS) {
  const u = prng(seed)
  const villages: DemoVillage[] = VILLAGE_NAMES.map((name, i) => ({
    code: `OMB-${String(i + 1).padStart(2, '0')}`,
    name,
    centreLat: round6(DISTRICT_CENTRE.lat + (u() - 0.5) * 0.5),
    centreLon: round6(DISTRICT_CENTRE.lon + (u() - 0.5) * 0.5),
    dealerKm: 1 + u() * 24,
    effect: VILLAGE_EFFECT_SD * normal(u)
  }))
  // Villages of different sizes: weights between 1 and 3.
  const weights = villages.map(() => 1 + 2 * u())
  const total = weights.reduce((a, b) => a + b, 0)
  const questions = demoQuestions()
  // The credit source and where the farm heard of the seed come from a stream of their own, so the draws above (and
  // every earlier answer of the demo) stay exactly as they were before these questions existed. Not in the true model.
  const uExtra = prng(seed + 1)
  const seasonStart = Date.parse('2026-10-05T06:00:00Z')
  const perVillage = new Array<number>(villages.length).fill(0)
  const visits: DemoVisit[] = []
  for (let i = 0; i < n; i++) {
    let pick = u() * total
    let g = 0
    while (pick > weights[g]! && g < villages.length - 1) pick -= weights[g++]!
    const village = villages[g]!
    perVillage[g]!++
    const schooling = Math.round(clip(6 + 3.5 * normal(u), 0, 16))
    const x = {
      farm_size_ha: round1(clip(Math.exp(0.5 + 0.6 * normal(u)), 0.1, 40)),
      household_size: Math.round(clip(6 + 2.2 * normal(u), 1, 20)),
      schooling_years: schooling,
      age_head: Math.round(clip(44 + 12 * normal(u), 18, 90)),
      female_head: u() < 0.27,
      dealer_distance_km: round1(clip(village.dealerKm + 2.5 * normal(u), 0.1, 60)),
      extension_contact: u() < 0.35,
      credit_access: u() < 0.25,
      group_member: u() < 0.4,
      livestock_tlu: round1(clip(Math.exp(0.9 * normal(u)) - 0.5, 0, 30)),
      owns_phone: u() < clip(0.55 + 0.03 * (schooling - 6), 0.1, 0.95)
    }
    let index: number = TRUE_BETA.intercept + village.effect
    for (const [key, value] of Object.entries(x)) index += TRUE_BETA[key as keyof typeof x] * Number(value)
    const adopted = index + normal(u) > 0 ? 1 : 0
    const startedAt = new Date(seasonStart + Math.floor(u() * 40) * 86_400_000 + Math.floor(u() * 9 * 3600) * 1000)
    const savedAt = new Date(startedAt.getTime() + (12 + Math.floor(u() * 24)) * 60_000)
    const lat = round6(village.centreLat + (u() - 0.5) * 0.02)
    const lon = round6(village.centreLon + (u() - 0.5) * 0.02)
    const answers: DemoVisit['answers'] = { adopted: adopted === 1, ...x, ...extraAnswers(uExtra, x.credit_access, x.extension_contact) }
    const record = { lat, lon, startedAt: startedAt.toISOString(), savedAt: savedAt.toISOString(), answers }
    visits.push({
      id: uuidFrom(u),
      villageIndex: g,
      farmCode: `${village.code}-${String(perVillage[g]).padStart(3, '0')}`,
      lat,
      lon,
      accuracyM: Math.round(4 + u() * 12),
      answers,
      startedAt,
      savedAt,
      adopted: adopted as 0 | 1,
      flags: intrinsicFlags(record, village, questions, { farRadiusKm: 5, minInterviewSeconds: 180 }),
      deviceHash: createHash('sha256').update(JSON.stringify(record)).digest('hex')
    })
  }
  return { villages, questions, visits }
}

/** The credit source (only with credit: otherwise not asked) and the sources the farm heard of the seed from. */
function extraAnswers(u: () => number, credit: boolean, extension: boolean): Record<string, string | string[]> {
  const out: Record<string, string | string[]> = {}
  if (credit) out.credit_source = CREDIT_SOURCES[Math.min(3, Math.floor(u() * 4))]![0]
  const chance: Record<string, number> = { radio: 0.45, neighbour: 0.5, extension_officer: extension ? 0.7 : 0.1, dealer: 0.25, field_day: 0.15 }
  out.heard_from = HEARD_FROM.map(([value]) => value).filter(value => u() < chance[value]!)
  return out
}

function round6(v: number) {
  return Math.round(v * 1e6) / 1e6
}
