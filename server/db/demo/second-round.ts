import { createHash } from 'node:crypto'
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize'
import { normal, prng } from '../../../shared/utils/random/prng'
import { notAskedKeys } from '../../../shared/utils/schemas/visit'
import { intrinsicFlags } from '../../utils/visit-flags'
import { QuestionnaireVersion, Round, RoundVillage, type Village, Visit } from '../models'
import { DEMO_SEED, DEMO_TECHNOLOGY, TRUE_BETA, demoChecks, demoQuestions, type DemoVisit } from './field-demo'

// The demo's earlier round on the same farms, so the farm register, the review's "other rounds", the panel export
// and the several-rounds models have something to show. Invented like the rest: 85 % of the farms of the main round
// were also visited one season earlier; their characteristics that change from season to season (farm size,
// livestock, extension contact, credit, group membership) were then a little different, and adoption came from the
// same probit with a lower intercept (ROUND_SHIFT) and a fresh error, so the later round's round effect is about
// +ROUND_SHIFT on the latent scale. Its own PRNG stream (seed + 2) leaves the main round exactly as it was.

export const EARLIER_SHARE = 0.85
export const ROUND_SHIFT = 0.35

const clip = (v: number, lo: number, hi: number) => Math.min(hi, Math.max(lo, v))
const round1 = (v: number) => Math.round(v * 10) / 10

function uuidFrom(u: () => number): string {
  const hex = Array.from({ length: 32 }, () => Math.floor(u() * 16).toString(16))
  hex[12] = '4'
  hex[16] = '89ab'[Math.floor(u() * 4)]!
  const s = hex.join('')
  return `${s.slice(0, 8)}-${s.slice(8, 12)}-${s.slice(12, 16)}-${s.slice(16, 20)}-${s.slice(20)}`
}

/** The earlier visits of the main round's farms: pure, deterministic. */
export function earlierVisits(later: DemoVisit[], villages: Array<{ centreLat: number, centreLon: number, effect: number }>, seed = DEMO_SEED + 2): DemoVisit[] {
  const u = prng(seed)
  const questions = demoQuestions()
  const seasonStart = Date.parse('2026-03-09T06:00:00Z')
  const out: DemoVisit[] = []
  for (const v of later) {
    if (u() >= EARLIER_SHARE) continue
    const a = v.answers as Record<string, number | boolean>
    const keep = (p: number, value: boolean, fresh: number) => (u() < p ? value : u() < fresh)
    const x = {
      farm_size_ha: round1(clip(Number(a.farm_size_ha) * Math.exp(0.15 * normal(u)), 0.1, 40)),
      household_size: Number(a.household_size),
      schooling_years: Number(a.schooling_years),
      age_head: Number(a.age_head),
      female_head: Boolean(a.female_head),
      dealer_distance_km: Number(a.dealer_distance_km),
      extension_contact: keep(0.6, Boolean(a.extension_contact), 0.3),
      credit_access: keep(0.75, Boolean(a.credit_access), 0.2),
      group_member: keep(0.85, Boolean(a.group_member), 0.35),
      livestock_tlu: round1(clip(Number(a.livestock_tlu) * Math.exp(0.2 * normal(u)), 0, 30)),
      owns_phone: Boolean(a.owns_phone)
    }
    const village = villages[v.villageIndex]!
    let index: number = TRUE_BETA.intercept - ROUND_SHIFT + village.effect
    for (const [key, value] of Object.entries(x)) index += TRUE_BETA[key as keyof typeof x] * Number(value)
    const adopted = index + normal(u) > 0 ? 1 : 0
    const answers: DemoVisit['answers'] = { adopted: adopted === 1, ...x }
    if (x.credit_access) answers.credit_source = ['savings_group', 'dealer_credit', 'microlender', 'relative'][Math.min(3, Math.floor(u() * 4))]!
    answers.heard_from = ['radio', 'neighbour', 'dealer'].filter(() => u() < 0.35)
    const startedAt = new Date(seasonStart + Math.floor(u() * 35) * 86_400_000 + Math.floor(u() * 9 * 3600) * 1000)
    const savedAt = new Date(startedAt.getTime() + (12 + Math.floor(u() * 24)) * 60_000)
    const lat = Math.round((v.lat + (u() - 0.5) * 0.0004) * 1e6) / 1e6
    const lon = Math.round((v.lon + (u() - 0.5) * 0.0004) * 1e6) / 1e6
    const record = { lat, lon, startedAt: startedAt.toISOString(), savedAt: savedAt.toISOString(), answers }
    out.push({
      id: uuidFrom(u),
      villageIndex: v.villageIndex,
      farmCode: v.farmCode,
      lat,
      lon,
      accuracyM: Math.round(4 + u() * 12),
      answers,
      startedAt,
      savedAt,
      adopted: adopted as 0 | 1,
      flags: intrinsicFlags(record, { centreLat: village.centreLat, centreLon: village.centreLon }, questions, { farRadiusKm: 5, minInterviewSeconds: 180 }),
      deviceHash: createHash('sha256').update(JSON.stringify(record)).digest('hex')
    })
  }
  return out
}

interface SeedInput {
  organisationId: number
  enumeratorId: number
  villageRows: Village[]
  villages: Array<{ centreLat: number, centreLon: number, effect: number }>
  later: DemoVisit[]
  /** The main round: this one is dated a season before it. */
  before: Round
  transaction: Transaction
}

/**
 * Seeds the earlier round (closed, all visits accepted). Its id comes after the main round's (the demo round stays
 * the organisation's first), but it is dated a season earlier, and several rounds are ordered by that date.
 */
export async function seedEarlierDemoRound(input: SeedInput): Promise<number> {
  const { organisationId, enumeratorId, villageRows, transaction } = input
  const questions = demoQuestions()
  const round = await Round.create({
    organisationId,
    name: 'Sorghum seed adoption, 2026 long rains',
    technology: DEMO_TECHNOLOGY,
    season: '2026 long rains',
    status: 'closed',
    closedAt: new Date(),
    currentVersionId: null
  }, { transaction })
  const version = await QuestionnaireVersion.create({ roundId: round.id, number: 1, definition: { questions, checks: demoChecks() }, frozenAt: new Date() }, { transaction })
  await round.update({ currentVersionId: version.id }, { transaction })
  await Round.sequelize!.query('UPDATE rounds SET created_at = ? WHERE id = ?', { replacements: [new Date(input.before.createdAt.getTime() - 182 * 86_400_000), round.id], type: QueryTypes.UPDATE, transaction })
  await RoundVillage.bulkCreate(villageRows.map(v => ({ roundId: round.id, villageId: v.id })), { transaction })
  const rows = earlierVisits(input.later, input.villages).map((v) => {
    const notAsked = notAskedKeys(questions, v.answers)
    return {
      id: v.id,
      organisationId,
      roundId: round.id,
      villageId: villageRows[v.villageIndex]!.id,
      enumeratorId,
      questionnaireVersionId: version.id,
      farmCode: v.farmCode,
      lat: v.lat,
      lon: v.lon,
      accuracyM: v.accuracyM,
      manualLocationReason: null,
      answers: v.answers,
      notAsked: notAsked.length ? notAsked : null,
      consentAt: v.startedAt,
      startedAt: v.startedAt,
      savedAt: v.savedAt,
      adopted: v.adopted,
      reviewState: 'accepted' as const,
      reviewReason: null,
      flags: v.flags,
      deviceHash: v.deviceHash,
      version: 2
    }
  })
  for (let i = 0; i < rows.length; i += 500) await Visit.bulkCreate(rows.slice(i, i + 500), { transaction })
  return round.id
}

/** Registers every demo farm (home village: its first visit's) and links the visits of both rounds to it. */
export async function registerDemoFarms(sequelize: Sequelize, organisationId: number, transaction: Transaction): Promise<void> {
  await sequelize.query(`INSERT INTO farms (organisation_id, code, village_id, created_at, updated_at)
    SELECT organisation_id, farm_code, village_id, NOW(3), NOW(3) FROM visits WHERE organisation_id = ? ORDER BY saved_at, id
    ON DUPLICATE KEY UPDATE farms.id = farms.id`, { replacements: [organisationId], type: QueryTypes.INSERT, transaction })
  await sequelize.query(`UPDATE visits v JOIN farms f ON f.organisation_id = v.organisation_id AND f.code = v.farm_code
    SET v.farm_id = f.id WHERE v.organisation_id = ? AND f.village_id = v.village_id`, { replacements: [organisationId], type: QueryTypes.UPDATE, transaction })
}
