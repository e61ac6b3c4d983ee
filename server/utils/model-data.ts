import { createHash } from 'node:crypto'
import { QueryTypes } from 'sequelize'
import { conditionText } from '#shared/utils/asking'
import { type AskingCounts, NOT_ASKED_LEVEL, type ModelQuestion } from '#shared/utils/modelling/questions'
import { VILLAGE_COLUMN } from '#shared/utils/modelling/spec-builder'
import { SAMPLE_LIST_WEIGHTS } from '#shared/utils/modelling/request'
import { sampleWeightsOf } from './sample-lists'
import type { CodedColumn, DataColumns, ModelSpec } from '#shared/utils/stats'
import { OUTCOME_KEY } from '#shared/utils/schemas/questionnaire'
import { database } from '../db/connection'
import { QuestionnaireVersion, Round } from '../db/models'
import type { ExcludedVisits } from '../db/models/model-run'
import { type ScannedValue, ScanMemo, parseJsonNumber, scanAnswers } from './answer-scan'
import { type PoolManager, eachRow } from './row-stream'
import { FARM_COLUMN, ROUND_COLUMN, type PanelRead } from './panel-data'
import { LATEST_OF_FARM_IN_ROUND } from './panel-export'

/** A round of this organisation with its current questions and village names: no visits read. */
export interface RoundContext {
  round: Round
  questions: ModelQuestion[]
  villageNames: Record<string, string>
}

/** What one streaming read of a round's accepted visits gives the fit. */
export interface RoundColumns {
  columns: DataColumns
  /** Buffers of `columns` to move (not copy) to the worker thread. */
  transfer: ArrayBuffer[]
  rowCount: number
  rowsHash: string
  usedRowsHash: string
  questionnaireVersionIds: number[]
  dataVersion: number
  excluded: ExcludedVisits
}

/** The round (404 for another organisation's), its current questions and its villages' names. */
export async function roundContext(roundId: number, organisationId: number): Promise<RoundContext> {
  const round = await Round.findOne({ where: { id: roundId, organisationId } })
  if (!round) throw createError({ statusCode: 404, message: 'No such survey round.' })
  const version = round.currentVersionId ? await QuestionnaireVersion.findByPk(round.currentVersionId) : null
  return {
    round,
    questions: (version?.definition.questions ?? []) as ModelQuestion[],
    villageNames: await villageNamesOf(organisationId)
  }
}

/**
 * The organisation's village names by code, as plain rows: a run's page reads them on every poll, and model
 * instances for a thousand villages cost more than the rest of the answer.
 */
export async function villageNamesOf(organisationId: number): Promise<Record<string, string>> {
  const rows = await database().query<{ code: string, name: string }>('SELECT code, name FROM villages WHERE organisation_id = ?', { replacements: [organisationId], type: QueryTypes.SELECT })
  const names: Record<string, string> = {}
  for (const r of rows) names[r.code] = r.name
  return names
}

/**
 * Accepted visits of the round and the others by review state: an index-only count. The caller has found the round
 * within the organisation already (roundContext); a condition on organisation_id would read every visit's row.
 */
export async function visitCounts(roundId: number): Promise<{ accepted: number, excluded: ExcludedVisits }> {
  const rows = await database().query<{ state: string, n: number | bigint }>(
    'SELECT review_state AS state, COUNT(*) AS n FROM visits WHERE round_id = ? GROUP BY review_state',
    { replacements: [roundId], type: QueryTypes.SELECT })
  const notAccepted: Record<string, number> = {}
  let accepted = 0
  for (const r of rows) {
    if (r.state === 'accepted') accepted = Number(r.n)
    else notAccepted[r.state] = Number(r.n)
  }
  return { accepted, excluded: { notAccepted } }
}

/**
 * For each question asked under a condition: of the round's accepted visits, how many answered it and how many were
 * not asked (one grouped read), so the builder can say how many farms each treatment of "not asked" keeps.
 */
export async function askingCounts(roundId: number, organisationId: number, questions: readonly ModelQuestion[]): Promise<Record<string, AskingCounts>> {
  const conditional = questions.filter(q => q.askWhen)
  if (!conditional.length) return {}
  const sums: string[] = []
  const params: unknown[] = []
  for (const q of conditional) {
    const path = `$."${q.key}"`
    sums.push('SUM(COALESCE(JSON_CONTAINS(not_asked, ?), 0))')
    params.push(JSON.stringify(q.key))
    sums.push(`SUM(CASE WHEN JSON_EXTRACT(answers, ?) IS NULL OR JSON_TYPE(JSON_EXTRACT(answers, ?)) = 'NULL' THEN 0
      WHEN JSON_TYPE(JSON_EXTRACT(answers, ?)) = 'ARRAY' THEN JSON_LENGTH(JSON_EXTRACT(answers, ?)) > 0 ELSE 1 END)`)
    params.push(path, path, path, path)
  }
  const [row] = await database().query<Record<string, unknown>>(
    `SELECT ${sums.map((sql, i) => `${sql} AS c${i}`).join(', ')} FROM visits WHERE round_id = ? AND organisation_id = ? AND review_state = 'accepted'`,
    { replacements: [...params, roundId, organisationId], type: QueryTypes.SELECT })
  return Object.fromEntries(conditional.map((q, i) => [q.key, {
    condition: conditionText(q.askWhen!, questions),
    notAsked: Number(row?.[`c${2 * i}`] ?? 0),
    answered: Number(row?.[`c${2 * i + 1}`] ?? 0)
  }]))
}

/** Whether the round has at least one accepted visit (one index probe). */
export async function hasAcceptedVisits(roundId: number): Promise<boolean> {
  const rows = await database().query('SELECT 1 FROM visits WHERE round_id = ? AND review_state = \'accepted\' LIMIT 1', { replacements: [roundId], type: QueryTypes.SELECT })
  return rows.length > 0
}

const isMissingText = (v: string | null): boolean => v === null || v === '' || v === 'NA'

class CodedBuilder {
  codes: Int32Array
  levels: string[] = []
  private index = new Map<string, number>()
  constructor(capacity: number) {
    this.codes = new Int32Array(capacity)
  }

  code(v: string | null): number {
    if (v === null) return -1
    let c = this.index.get(v)
    if (c === undefined) {
      c = this.levels.length
      this.levels.push(v)
      this.index.set(v, c)
    }
    return c
  }
}

/**
 * Reads the round's accepted visits for one specification in ONE streaming query, taking only the answers the model
 * uses out of each visit's stored JSON (one scan per row, `answer-scan.ts`), straight into typed columns: no model
 * instances and no object per visit is kept. The row hash is computed while streaming. The read runs in a consistent
 * snapshot together with the round's data version, so the version stored with the run belongs to exactly these rows.
 */
export async function loadRoundColumns(roundId: number, organisationId: number, spec: ModelSpec, panel?: PanelRead): Promise<RoundColumns> {
  // Several rounds (panel-data.ts): the same one query over every round, with each row's round and registered farm.
  const roundIds = panel ? panel.rounds.map(r => r.id) : [roundId]
  const roundLabel = new Map((panel?.rounds ?? []).map(r => [r.id, r.label]))
  const base = panel ? 6 : 4
  const keys = [...new Set([...spec.covariates.map(c => c.name), ...(spec.weights ? [spec.weights] : [])])]
  const covariateOf = (k: string) => spec.covariates.find(c => c.name === k)
  // An option of a several-answer question (question.option) is read as 0/1, a number the engine takes as yes/no.
  const numeric = keys.map(k => k === spec.weights || k.includes('.') || (covariateOf(k)?.type ?? 'numeric') === 'numeric')
  // Farms a conditional question was not asked at, when the model counts them as 0: the value they get instead of
  // missing. (Left out instead, they are simply missing: hidden questions hold no answer.)
  const zeroFor = keys.map((k) => {
    const c = covariateOf(k)
    if (c?.notAsked !== 'zero') return null
    return numeric[keys.indexOf(k)] ? '0' : c.type === 'yesno' ? 'false' : NOT_ASKED_LEVEL
  })
  // Weights from the sample lists: one weight per village, given to the visits whose farm code is on the village's
  // list (main sample or replacement: a replacement stands for the farm it replaces). Other visits have none.
  const sampleAt = keys.indexOf(SAMPLE_LIST_WEIGHTS)
  const sampleWeights = sampleAt >= 0 ? (await sampleWeightsOf(organisationId, roundId)).byVillage : null
  const manager = database().connectionManager as unknown as PoolManager
  const conn = await manager.getConnection({ type: 'read' })
  let adopted = new Float64Array(0)
  let village = new CodedBuilder(0)
  let roundCol = new CodedBuilder(0)
  let farmCol = new CodedBuilder(0)
  let nums: Array<Float64Array | null> = []
  let texts: Array<CodedBuilder | null> = []
  const missingRows = keys.map(() => [] as number[])
  const excluded: ExcludedVisits = { notAccepted: {} }
  const versions = new Set<number>()
  const hash = createHash('sha256')
  const usedHash = createHash('sha256')
  let dataVersion = 0
  let n = 0
  try {
    await conn.query('START TRANSACTION WITH CONSISTENT SNAPSHOT, READ ONLY')
    // Several rounds: the sum of their versions, which only ever go up, so it changes exactly when one of them does.
    const rounds = await conn.query('SELECT SUM(data_version) AS data_version FROM rounds WHERE id IN (?)', [roundIds]) as Array<{ data_version: number }>
    dataVersion = Number(rounds[0]?.data_version ?? 0)
    // Counted in the same snapshot as the rows, so the columns can be sized exactly. By round alone: the round is
    // this organisation's (every caller found it by organisation first), and the (round_id, review_state) index
    // answers the count without reading a row; adding organisation_id made it read every visit.
    const counts = await conn.query('SELECT review_state AS state, COUNT(*) AS n FROM visits WHERE round_id IN (?) GROUP BY review_state', [roundIds]) as Array<{ state: string, n: number | bigint }>
    let accepted = 0
    for (const c of counts) {
      if (c.state === 'accepted') accepted = Number(c.n)
      else excluded.notAccepted[c.state] = Number(c.n)
    }
    const capacity = Math.max(1, accepted)
    adopted = new Float64Array(capacity)
    village = new CodedBuilder(capacity)
    roundCol = new CodedBuilder(panel ? capacity : 0)
    farmCol = new CodedBuilder(panel ? capacity : 0)
    nums = keys.map((_, j) => (numeric[j] ? new Float64Array(capacity) : null))
    texts = keys.map((_, j) => (numeric[j] ? null : new CodedBuilder(capacity)))
    usedHash.update(`data version ${dataVersion}\n`)
    const villageRows = await conn.query('SELECT id, code FROM villages WHERE organisation_id = ?', [organisationId]) as Array<{ id: number, code: string }>
    const codeOf = new Map(villageRows.map(v => [Number(v.id), v.code]))
    // Answers are read from the stored JSON text by one scan per row (answer-scan.ts: several times faster than one
    // JSON_VALUE per answer in the query). A key question.option (an option of a several-answer question) reads the
    // question's list: 1 ticked, 0 not ticked, nothing when the question holds no list (unanswered or not asked).
    // The sample lists' weight is not an answer: it comes from whether the farm is on its village's list (below).
    const questionKeys = [...new Set(keys.filter(k => k !== SAMPLE_LIST_WEIGHTS).map(k => k.split('.')[0]!))]
    const wanted = new Map(questionKeys.map((q, i) => [q, i]))
    const slotOf = keys.map(k => wanted.get(k.split('.')[0]!) ?? -1)
    const optionOf = keys.map(k => k.split('.')[1])
    const scanned: ScannedValue[] = Array.from({ length: questionKeys.length }, () => null)
    const memo = new ScanMemo(questionKeys.length)
    const flagged = keys.some((_, j) => zeroFor[j] !== null)
    // No join (codes come from the map above), so rows stream from the first one on: with a join on the villages
    // MariaDB had started from the villages and sorted every row before sending one, which for 10^6 visits outlasted
    // the connection's socket timeout. One round: the optimizer chooses, and either way rows come in id order without
    // a sort (the (round_id, review_state) index holds the primary key in order; a round that is most of the table is
    // read along the primary key itself, 4.7 s instead of 12.3 s for 10^6 visits with the index forced, as every
    // forced entry costs a descent of the primary key's tree). Several rounds: the index is forced, as only it gives
    // (round, id) order without sorting; of a farm's accepted visits in one round only the latest saved
    // (panel-export.ts).
    const listedAt = base + (flagged ? 2 : 1)
    const listed = sampleAt >= 0 ? ', EXISTS (SELECT 1 FROM sample_farms sf WHERE sf.round_id = v.round_id AND sf.village_id = v.village_id AND sf.farm_code = v.farm_code)' : ''
    const sql = `SELECT v.id, v.village_id, v.adopted, v.questionnaire_version_id${panel ? ', v.round_id, v.farm_id' : ''}, v.answers${flagged ? ', v.not_asked' : ''}${listed}
      FROM visits v${panel ? ' FORCE INDEX (visits_round_id_review_state)' : ''}
      WHERE v.round_id IN (?) AND v.organisation_id = ? AND v.review_state = 'accepted'${panel ? ` AND ${LATEST_OF_FARM_IN_ROUND}` : ''}
      ORDER BY v.round_id, v.id`
    const params = [roundIds, organisationId]
    let chunk = ''
    let usedChunk = ''
    // typeCast off for this query: the pool's per-value hook (Sequelize's type parsers) cost more than the decoding
    // itself, and these columns need none (numbers and strings as the driver reads them). autoJsonMap off: the
    // answers arrive as text for the scan, not as an object per visit built by JSON.parse.
    await eachRow(conn.queryStream({ sql, rowsAsArray: true, typeCast: null, autoJsonMap: false }, params), (row) => {
      if (n === adopted.length) throw new Error('more accepted visits than counted: the read is not a snapshot')
      const id = row[0] as string
      const code = codeOf.get(Number(row[1]))
      if (code === undefined) throw new Error('a visit refers to a village of another organisation')
      const y = Number(row[2])
      versions.add(Number(row[3]))
      adopted[n] = y
      village.codes[n] = village.code(code)
      let line = `${id}|${code}|${y}`
      if (panel) {
        const label = roundLabel.get(Number(row[4]))!
        roundCol.codes[n] = roundCol.code(label)
        farmCol.codes[n] = row[5] === null ? -1 : farmCol.code(String(row[5]))
        line += `|${label}|${row[5] ?? '\\N'}`
      }
      let used = true
      const text = row[base] as string | null
      scanAnswers(text, wanted, scanned, memo)
      const notAsked = flagged && row[base + 1] ? JSON.parse(row[base + 1] as string) as string[] : null
      for (let j = 0; j < keys.length; j++) {
        const value = j === sampleAt ? null : scanned[slotOf[j]!]!
        const option = optionOf[j]
        const substituted = zeroFor[j] !== null && notAsked?.includes(questionKeys[slotOf[j]!]!)
        const v = j === sampleAt
          ? (Number(row[listedAt]) === 1 && sampleWeights!.has(Number(row[1])) ? String(sampleWeights!.get(Number(row[1]))) : null)
          : substituted
            ? zeroFor[j]!
            : option === undefined
              ? (Array.isArray(value) ? null : value)
              : (Array.isArray(value) && value.length > 0 ? (value.includes(option) ? '1' : '0') : null)
        line += v === null ? '|\\N' : `|${v}`
        if (isMissingText(v)) {
          used = false
          missingRows[j]!.push(n)
        }
        if (nums[j]) {
          // A JSON number answer is read in place (parseJsonNumber: the same value Number() gives, without the copy).
          const at = j !== sampleAt && !substituted && option === undefined ? memo.starts[slotOf[j]!]! : -1
          const first = at >= 0 ? text!.charCodeAt(at) : 0
          nums[j]![n] = v === null || isMissingText(v) ? Number.NaN : (first === 45 || (first >= 48 && first <= 57)) ? parseJsonNumber(text!, at) : Number(v)
        }
        else texts[j]!.codes[n] = isMissingText(v) ? -1 : texts[j]!.code(v)
      }
      chunk += `${line}\n`
      if (used) usedChunk += `${id}\n`
      if (chunk.length > 1 << 16) {
        hash.update(chunk)
        chunk = ''
        usedHash.update(usedChunk)
        usedChunk = ''
      }
      n++
    })
    hash.update(chunk)
    usedHash.update(usedChunk)
    await conn.query('COMMIT')
  }
  catch (error) {
    await conn.query('ROLLBACK').catch(() => {})
    throw error
  }
  finally {
    await manager.releaseConnection(conn)
  }
  const columns: Record<string, ArrayLike<unknown> | CodedColumn> = {
    [OUTCOME_KEY]: adopted.subarray(0, n),
    [VILLAGE_COLUMN]: { codes: village.codes.subarray(0, n), levels: village.levels }
  }
  const transfer = [adopted.buffer, village.codes.buffer] as ArrayBuffer[]
  if (panel) {
    columns[ROUND_COLUMN] = { codes: roundCol.codes.subarray(0, n), levels: roundCol.levels }
    columns[FARM_COLUMN] = { codes: farmCol.codes.subarray(0, n), levels: farmCol.levels }
    transfer.push(roundCol.codes.buffer as ArrayBuffer, farmCol.codes.buffer as ArrayBuffer)
  }
  keys.forEach((key, j) => {
    if (texts[j]) {
      columns[key] = { codes: texts[j]!.codes.subarray(0, n), levels: texts[j]!.levels }
      transfer.push(texts[j]!.codes.buffer as ArrayBuffer)
    }
    else if (missingRows[j]!.length === 0) {
      columns[key] = nums[j]!.subarray(0, n)
      transfer.push(nums[j]!.buffer as ArrayBuffer)
    }
    else {
      // A numeric answer missing for some visits: a plain array, where null is "missing" to the engine.
      const arr: Array<number | null> = Array.from(nums[j]!.subarray(0, n))
      for (const r of missingRows[j]!) arr[r] = null
      columns[key] = arr
    }
  })
  return {
    columns,
    transfer,
    rowCount: n,
    rowsHash: hash.digest('hex'),
    usedRowsHash: usedHash.digest('hex'),
    questionnaireVersionIds: [...versions].sort((a, b) => a - b),
    dataVersion,
    excluded
  }
}
