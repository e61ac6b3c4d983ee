import type { H3Event } from 'h3'
import { QueryTypes } from 'sequelize'
import type { FieldSampleList, RoundSample, SampleFarmRow, SampleListProblem, SampleVillageView } from '#shared/types/sample'
import { CsvFileError } from '#shared/utils/imports/csv-rows'
import { readSampleCsv } from '#shared/utils/sampling/list-csv'
import { responseRates, villageWeight } from '#shared/utils/sampling/weights'
import { SAMPLE_LIST_WEIGHTS } from '#shared/utils/modelling/request'
import { type SampleFarmInput, type SampleOutcomeRecord, sampleListSchema, type SampleUpload, type SampleListInput } from '#shared/utils/schemas/sample'
import { Assignment, RoundVillage, SampleFarm, SampleVillage, Village } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'
import { bumpDataVersion } from './data-version'
import { findRound } from './rounds'

// The sample to visit, per round × village: the coordinator's lists (names included), the assigned enumerator's
// copy in the tablet setup, the non-interviews the tablets record, response rates and the sampling weights.

/** Farm codes (lower case) with a visit of the round, per village: "visited" is read from the visits themselves. */
async function visitedCodes(roundId: number, villageIds?: number[]): Promise<Map<number, Set<string>>> {
  const rows = await database().query<{ villageId: number, farmCode: string }>(
    `SELECT DISTINCT village_id AS villageId, farm_code AS farmCode FROM visits WHERE round_id = ? AND village_id IS NOT NULL${villageIds ? ' AND village_id IN (?)' : ''}`,
    { replacements: villageIds ? [roundId, villageIds.length ? villageIds : [0]] : [roundId], type: QueryTypes.SELECT })
  const map = new Map<number, Set<string>>()
  for (const r of rows) {
    const id = Number(r.villageId)
    if (!map.has(id)) map.set(id, new Set())
    map.get(id)!.add(String(r.farmCode).toLowerCase())
  }
  return map
}

function farmRow(f: SampleFarm, visited: Set<string> | undefined): SampleFarmRow {
  return {
    farmCode: f.farmCode,
    rank: f.sampleRank,
    headName: f.headName,
    hint: f.hint,
    lat: f.lat,
    lon: f.lon,
    outcome: f.outcome,
    outcomeNote: f.outcomeNote,
    replacedBy: f.replacedBy,
    visited: visited?.has(f.farmCode.toLowerCase()) ?? false
  }
}

const byRank = (a: SampleFarmRow, b: SampleFarmRow) => a.rank - b.rank || a.farmCode.localeCompare(b.farmCode)

/** Every village of the round with its list (for coordinators only: it holds the heads' names). */
export async function roundSample(organisationId: number, roundId: number): Promise<RoundSample> {
  await findRound(organisationId, roundId)
  const links = await RoundVillage.findAll({ where: { roundId } })
  const [villages, designs, farms, visited] = await Promise.all([
    Village.findAll({ where: { id: links.map(l => l.villageId), organisationId }, order: [['name', 'ASC']] }),
    SampleVillage.findAll({ where: { roundId, organisationId } }),
    SampleFarm.findAll({ where: { roundId, organisationId } }),
    visitedCodes(roundId)
  ])
  return {
    roundId,
    villages: villages.map((v): SampleVillageView => {
      const design = designs.find(d => d.villageId === v.id)
      const rows = farms.filter(f => f.villageId === v.id).map(f => farmRow(f, visited.get(v.id))).sort(byRank)
      const weight = rows.length || design
        ? villageWeight({ village: v.name, listedFarms: design?.listedFarms ?? null, selectionProbability: design?.selectionProbability ?? null, mainSample: rows.filter(r => r.rank === 0).length })
        : { ok: false as const, problem: `No sample list for village ${v.name} yet.` }
      return {
        villageId: v.id,
        villageCode: v.code,
        villageName: v.name,
        listedFarms: design?.listedFarms ?? null,
        selectionProbability: design?.selectionProbability ?? null,
        farms: rows,
        weight: weight.ok ? weight.weight : null,
        weightProblem: weight.ok ? null : weight.problem,
        rates: responseRates(rows)
      }
    })
  }
}

function unprocessable(problems: SampleListProblem[]): never {
  throw createError({ statusCode: 422, message: `The list was not saved: ${problems.length === 1 ? 'one problem' : `${problems.length} problems`} to fix first.`, data: { problems } })
}

/** The farms of an upload (the file's rows, checked one by one) or of the typed list; nothing is written on a problem. */
function farmsOf(body: SampleUpload | SampleListInput): SampleFarmInput[] {
  if (!('csv' in body)) return body.farms
  let read
  try {
    read = readSampleCsv(body.csv)
  }
  catch (error) {
    if (error instanceof CsvFileError) throw createError({ statusCode: 400, message: error.message })
    throw error
  }
  if (read.problems.length) unprocessable(read.problems)
  const checked = sampleListSchema.safeParse({ listedFarms: body.listedFarms, selectionProbability: body.selectionProbability, farms: read.farms })
  if (!checked.success) unprocessable(checked.error.issues.map(i => ({ row: null, column: null, message: i.message })))
  return read.farms
}

/**
 * Replaces one village's list in one transaction. Outcomes already recorded on the tablets stay with the farms
 * still on the list (matched by code), so correcting a hint or adding a replacement loses no field work.
 */
export async function saveSampleList(event: H3Event, user: SignedInUser, roundId: number, villageId: number, body: SampleUpload | SampleListInput) {
  await findRound(user.organisationId, roundId)
  const link = await RoundVillage.findOne({ where: { roundId, villageId } })
  const village = link ? await Village.findOne({ where: { id: villageId, organisationId: user.organisationId } }) : null
  if (!village) throw createError({ statusCode: 404, message: 'That village is not part of this round.' })
  const farms = farmsOf(body)
  const main = farms.filter(f => f.rank === 0).length
  if (body.listedFarms !== null && body.listedFarms > 0 && main > body.listedFarms) {
    unprocessable([{ row: null, column: null, message: `The main sample (${main} farms) is larger than the ${body.listedFarms} farms listed in ${village.name}.` }])
  }
  return database().transaction(async (transaction) => {
    const before = await SampleFarm.findAll({ where: { roundId, villageId }, transaction, lock: transaction.LOCK.UPDATE })
    const kept = new Map(before.map(f => [f.farmCode.toLowerCase(), f]))
    await SampleFarm.destroy({ where: { roundId, villageId }, transaction })
    if (farms.length) {
      await SampleFarm.bulkCreate(farms.map((f) => {
        const old = kept.get(f.farmCode.toLowerCase())
        return {
          organisationId: user.organisationId,
          roundId,
          villageId,
          farmCode: f.farmCode,
          sampleRank: f.rank,
          headName: f.headName ?? null,
          hint: f.hint ?? null,
          lat: f.lat ?? null,
          lon: f.lon ?? null,
          outcome: old?.outcome ?? null,
          outcomeNote: old?.outcomeNote ?? null,
          replacedBy: old?.replacedBy ?? null,
          outcomeBy: old?.outcomeBy ?? null,
          outcomeAt: old?.outcomeAt ?? null
        }
      }), { transaction })
    }
    const design = await SampleVillage.findOne({ where: { roundId, villageId }, transaction, lock: transaction.LOCK.UPDATE })
    const facts = { listedFarms: body.listedFarms, selectionProbability: body.selectionProbability, updatedBy: user.id }
    if (design) await design.update(facts, { transaction })
    else await SampleVillage.create({ organisationId: user.organisationId, roundId, villageId, ...facts }, { transaction })
    // The audit entry counts; it never quotes names (the log outlives the retention of the list).
    await audit(event, user, { action: 'round.sample_list', entityType: 'round', entityId: roundId, details: { village: village.name, farms: farms.length, mainSample: main, listedFarms: body.listedFarms, selectionProbability: body.selectionProbability, ...('csv' in body ? { fileName: body.fileName ?? null } : {}) } }, transaction)
    // Fits weighted by the lists read them: a changed list makes them out of date, as a changed visit does.
    await bumpDataVersion(roundId, transaction)
    const weight = villageWeight({ village: village.name, listedFarms: body.listedFarms, selectionProbability: body.selectionProbability, mainSample: main })
    return { farms: farms.length, mainSample: main, weight: weight.ok ? weight.weight : null, weightProblem: weight.ok ? null : weight.problem }
  })
}

/** The lists of the villages this enumerator is assigned to, for the tablet's setup (names only for their own villages). */
export async function sampleListsForEnumerator(actor: { id: number, organisationId: number }, assignments: ReadonlyArray<{ roundId: number, villageId: number }>): Promise<FieldSampleList[]> {
  if (!assignments.length) return []
  const roundIds = [...new Set(assignments.map(a => a.roundId))]
  const farms = await SampleFarm.findAll({ where: { organisationId: actor.organisationId, roundId: roundIds, villageId: [...new Set(assignments.map(a => a.villageId))] } })
  const lists: FieldSampleList[] = []
  for (const roundId of roundIds) {
    const mine = assignments.filter(a => a.roundId === roundId).map(a => a.villageId)
    const visited = await visitedCodes(roundId, mine)
    for (const villageId of mine) {
      const rows = farms.filter(f => f.roundId === roundId && f.villageId === villageId).map(f => farmRow(f, visited.get(villageId))).sort(byRank)
      if (rows.length) lists.push({ roundId, villageId, farms: rows })
    }
  }
  return lists
}

export interface OutcomeResult { index: number, status: 'stored' | 'rejected', message?: string }

/** Non-interviews from a tablet: each record checked against the sender's assignments and the village's list. */
export async function recordSampleOutcomes(user: SignedInUser, outcomes: SampleOutcomeRecord[]): Promise<{ results: OutcomeResult[] }> {
  const assignments = await Assignment.findAll({ where: { userId: user.id, roundId: [...new Set(outcomes.map(o => o.roundId))] } })
  const results: OutcomeResult[] = []
  await database().transaction(async (transaction) => {
    for (const [index, o] of outcomes.entries()) {
      if (!assignments.some(a => a.roundId === o.roundId && a.villageId === o.villageId)) {
        results.push({ index, status: 'rejected', message: 'You are not assigned to this village in this round.' })
        continue
      }
      const list = await SampleFarm.findAll({ where: { organisationId: user.organisationId, roundId: o.roundId, villageId: o.villageId }, transaction, lock: transaction.LOCK.UPDATE })
      const farm = list.find(f => f.farmCode.toLowerCase() === o.farmCode.toLowerCase())
      if (!farm) {
        results.push({ index, status: 'rejected', message: `Farm ${o.farmCode} is not on this village's list.` })
        continue
      }
      const replacement = o.replacedBy ? list.find(f => f.farmCode.toLowerCase() === o.replacedBy!.toLowerCase()) : null
      if (o.replacedBy && (!replacement || replacement.sampleRank === 0)) {
        results.push({ index, status: 'rejected', message: `Farm ${o.replacedBy} is not a replacement on this village's list.` })
        continue
      }
      await farm.update({ outcome: o.outcome, outcomeNote: o.note, replacedBy: replacement?.farmCode ?? null, outcomeBy: user.id, outcomeAt: new Date(o.recordedAt) }, { transaction })
      results.push({ index, status: 'stored' })
    }
  })
  return { results }
}

export interface SampleWeights {
  /** village id → the weight of every listed farm of the village. */
  byVillage: Map<number, number>
  /** One line per village whose weight cannot be computed. */
  problems: string[]
}

/** The round's weights by village, for the model builder's "weights from the sample lists". */
export async function sampleWeightsOf(organisationId: number, roundId: number): Promise<SampleWeights> {
  const [designs, counts, villages] = await Promise.all([
    SampleVillage.findAll({ where: { organisationId, roundId } }),
    database().query<{ villageId: number, main: number | string }>(`SELECT village_id AS villageId, SUM(sample_rank = 0) AS main
      FROM sample_farms WHERE organisation_id = ? AND round_id = ? GROUP BY village_id`, { replacements: [organisationId, roundId], type: QueryTypes.SELECT }),
    database().query<{ id: number, name: string }>('SELECT v.id, v.name FROM villages v JOIN round_villages rv ON rv.village_id = v.id WHERE rv.round_id = ? AND v.organisation_id = ?', { replacements: [roundId, organisationId], type: QueryTypes.SELECT })
  ])
  const byVillage = new Map<number, number>()
  const problems: string[] = []
  for (const v of villages) {
    const design = designs.find(d => d.villageId === Number(v.id))
    const main = Number(counts.find(c => Number(c.villageId) === Number(v.id))?.main ?? 0)
    if (!design && !main) continue // no list: its visits simply have no weight (counted as left out)
    const w = villageWeight({ village: v.name, listedFarms: design?.listedFarms ?? null, selectionProbability: design?.selectionProbability ?? null, mainSample: main })
    if (w.ok) byVillage.set(Number(v.id), w.weight)
    else problems.push(w.problem)
  }
  if (!byVillage.size && !problems.length) problems.push('This round has no sample lists yet: add them on the round\'s Sample part, or take the weights from a question.')
  return { byVillage, problems }
}

/** Refuses (400, on the weights field) a fit weighted by the sample lists while a village's weight can't be computed. */
export async function requireSampleWeights(spec: { weights?: string }, roundId: number, organisationId: number): Promise<void> {
  if (spec.weights !== SAMPLE_LIST_WEIGHTS) return
  const { problems } = await sampleWeightsOf(organisationId, roundId)
  if (problems.length) {
    const message = problems.join(' ')
    throw createError({ statusCode: 400, message: `weights: ${message}`, data: { fieldErrors: { weights: message } } })
  }
}

export const SAMPLE_WEIGHT_EXPORT_COLUMN = 'sampling_weight'
export const SAMPLE_WEIGHT_EXPORT_MEANING = 'Sampling weight from the sample lists: 1 / (probability the village was drawn × main-sample farms / farms listed); a replacement weighs as the farm it replaces; empty when the farm is not on its village\'s list or the village\'s weight can\'t be computed'

/** The weight of each accepted visit of a listed farm (visit id → weight), for the round's export. */
export async function sampleWeightByVisit(organisationId: number, roundId: number): Promise<Map<string, number>> {
  const { byVillage } = await sampleWeightsOf(organisationId, roundId)
  const out = new Map<string, number>()
  if (!byVillage.size) return out
  const rows = await database().query<{ id: string, villageId: number }>(`SELECT v.id, v.village_id AS villageId FROM visits v
    JOIN sample_farms sf ON sf.round_id = v.round_id AND sf.village_id = v.village_id AND sf.farm_code = v.farm_code
    WHERE v.round_id = ? AND v.organisation_id = ? AND v.review_state = 'accepted'`, { replacements: [roundId, organisationId], type: QueryTypes.SELECT })
  for (const r of rows) {
    const w = byVillage.get(Number(r.villageId))
    if (w !== undefined) out.set(r.id, w)
  }
  return out
}
