import { createError } from 'h3'
import { OUTCOME_KEY, type Question, type QuestionGroup } from '#shared/utils/schemas/questionnaire'
import { type PlotModelRequest, plotTermColumn } from '#shared/utils/schemas/plot-model'
import type { CodedColumn, CovariateSpec, DataColumns } from '#shared/utils/stats'
import { database } from '../db/connection'
import { QuestionnaireVersion, Round } from '../db/models'
import { type PoolManager, eachRow } from './row-stream'

// The data of a model from a repeated group's rows (plots), read in ONE streaming query: the round's accepted visits
// LEFT JOINed with JSON_TABLE over their rows (MariaDB 10.6+), only the answers the model uses, straight into typed
// columns. Plot level keeps one data row per group row; farm level folds each visit's rows into its terms while the
// rows stream (they arrive in visit order).

const MODEL_TYPES = new Set(['number', 'whole', 'yesno', 'choice'])
export const CLUSTER_COLUMN = 'cluster'
export const ROW_OUTCOME = 'row_outcome'

export interface PlotModelCounts {
  /** Accepted visits read. */
  farms: number
  /** Accepted visits with no row in the group (left out at plot level; at farm level their shares are missing). */
  farmsWithoutRows: number
  /** Group rows read (plot level) or farms (farm level) before missing answers are left out. */
  rows: number
  /** Data rows with every answer the model uses: what the fit keeps. */
  kept: number
  /** Per column: data rows left out because it is missing there. */
  missingBy: Record<string, number>
}

export interface PlotModelData {
  columns: DataColumns
  covariates: CovariateSpec[]
  outcome: string
  outcomeLabel: string
  counts: PlotModelCounts
  group: QuestionGroup
}

function bad(message: string): never {
  throw createError({ statusCode: 400, message, data: { fieldErrors: { _: message } } })
}

/** Checks the request against the round's current questionnaire and names what each chosen key is. */
async function resolve(roundId: number, organisationId: number, request: PlotModelRequest) {
  const round = await Round.findOne({ where: { id: roundId, organisationId } })
  if (!round) throw createError({ statusCode: 404, message: 'No such survey round.' })
  const definition = round.currentVersionId ? (await QuestionnaireVersion.findByPk(round.currentVersionId))?.definition : undefined
  const group = definition?.groups?.find(g => g.key === request.group)
  if (!definition || !group) bad('The round\'s questionnaire has no such group of questions.')
  const rowQuestion = (k: string, what: string, types = MODEL_TYPES): Question => {
    const q = group.questions.find(x => x.key === k)
    if (!q) bad(`${what}: not a question of "${group.label}".`)
    if (!types.has(q.type)) bad(`${what}: "${q.label}" cannot enter a model (numbers, yes/no and one-of-a-list questions can).`)
    return q
  }
  const farmQuestion = (k: string): Question => {
    const q = definition.questions.find(x => x.key === k)
    if (!q || q.key === OUTCOME_KEY) bad('A farm term is not a question asked once per farm.')
    if (!MODEL_TYPES.has(q.type)) bad(`"${q.label}" cannot enter a model (numbers, yes/no and one-of-a-list questions can).`)
    return q
  }
  const outcome = request.level === 'plot' ? rowQuestion(request.outcome!, 'The outcome', new Set(['yesno'])) : null
  const rowCovariates = request.level === 'plot' ? request.rowCovariates.map(k => rowQuestion(k, 'A plot term')) : []
  if (outcome && rowCovariates.some(q => q.key === outcome.key)) bad('The outcome cannot also be a term of the model.')
  const farmCovariates = request.farmCovariates.map(farmQuestion)
  const rowTerms = request.level === 'farm'
    ? request.rowTerms.map(t => ({
        term: t,
        question: rowQuestion(t.question, 'A term from the plots', new Set(['yesno'])),
        area: t.kind === 'share_area' ? rowQuestion(t.area!, 'The area of each plot', new Set(['number', 'whole'])) : null
      }))
    : []
  return { round, group, outcome, rowCovariates, farmCovariates, rowTerms }
}

/** A column being filled: numbers (NaN = missing) or the codes of a choice's levels (-1 = missing). */
class Column {
  values: number[] = []
  levels: string[] = []
  private index = new Map<string, number>()
  constructor(readonly kind: 'number' | 'yesno' | 'choice') {}
  push(raw: string | null): boolean {
    if (raw === null || raw === '' || raw === 'null') {
      this.values.push(this.kind === 'choice' ? -1 : Number.NaN)
      return false
    }
    if (this.kind === 'choice') {
      let c = this.index.get(raw)
      if (c === undefined) {
        c = this.levels.length
        this.levels.push(raw)
        this.index.set(raw, c)
      }
      this.values.push(c)
      return true
    }
    const v = this.kind === 'yesno' ? (raw === 'true' || raw === '1' ? 1 : raw === 'false' || raw === '0' ? 0 : Number.NaN) : Number(raw)
    this.values.push(v)
    return Number.isFinite(v)
  }

  pushNumber(v: number): boolean {
    this.values.push(v)
    return Number.isFinite(v)
  }

  output(): ArrayLike<unknown> | CodedColumn {
    if (this.kind === 'choice') return { codes: Int32Array.from(this.values), levels: this.levels }
    if (this.values.every(Number.isFinite)) return Float64Array.from(this.values)
    return this.values.map(v => Number.isFinite(v) ? v : null)
  }
}

const kindOf = (q: Question): Column['kind'] => q.type === 'choice' ? 'choice' : q.type === 'yesno' ? 'yesno' : 'number'
const typeOf = (q: Question): CovariateSpec['type'] => q.type === 'choice' ? 'categorical' : q.type === 'yesno' ? 'yesno' : 'numeric'

/** Reads the round's accepted visits and their rows for one plot or farm model, in one streaming query. */
export async function loadPlotModelData(organisationId: number, request: PlotModelRequest): Promise<PlotModelData> {
  const { round, group, outcome, rowCovariates, farmCovariates, rowTerms } = await resolve(request.roundId, organisationId, request)
  // The row questions the query reads, each once: paths inside JSON_TABLE must be literals, so only keys checked
  // against the questionnaire above (which match [a-z][a-z0-9_]*) are written into the statement.
  const rowKeys = [...new Set([outcome?.key, ...rowCovariates.map(q => q.key), ...rowTerms.flatMap(t => [t.question.key, t.area?.key])].filter((k): k is string => !!k))]
  for (const k of [group.key, ...rowKeys]) if (!/^[a-z][a-z0-9_]{0,39}$/.test(k)) bad('A key is not valid.')
  const farmSelects = farmCovariates.map(() => 'JSON_VALUE(v.answers, ?)')
  const tableColumns = ['rn FOR ORDINALITY', ...rowKeys.map((k, i) => `c${i} VARCHAR(255) PATH '$.${k}'`)]
  const sql = `SELECT v.id, v.village_id${farmSelects.length ? `, ${farmSelects.join(', ')}` : ''}, v.adopted, p.rn${rowKeys.length ? `, ${rowKeys.map((_, i) => `p.c${i}`).join(', ')}` : ''}
    FROM visits v FORCE INDEX (visits_round_id_review_state)
    LEFT JOIN JSON_TABLE(v.answers, '$.${group.key}[*]' COLUMNS (${tableColumns.join(', ')})) AS p ON 1
    WHERE v.round_id = ? AND v.organisation_id = ? AND v.review_state = 'accepted'
    ORDER BY v.id, p.rn`
  const params = [...farmCovariates.map(q => `$."${q.key}"`), round.id, organisationId]

  const farmCols = farmCovariates.map(q => new Column(kindOf(q)))
  const rowCols = rowCovariates.map(q => new Column(kindOf(q)))
  const termCols = rowTerms.map(() => new Column('number'))
  const y = new Column('yesno')
  const cluster = new Column('choice')
  const counts: PlotModelCounts = { farms: 0, farmsWithoutRows: 0, rows: 0, kept: 0, missingBy: {} }
  const missing = (name: string) => {
    counts.missingBy[name] = (counts.missingBy[name] ?? 0) + 1
  }
  const at = { farm: 2, adopted: 2 + farmCovariates.length, rn: 3 + farmCovariates.length, row: 4 + farmCovariates.length }
  const rowIndex = new Map(rowKeys.map((k, i) => [k, at.row + i]))
  const text = (v: unknown) => v === null || v === undefined ? null : String(v)

  const manager = database().connectionManager as unknown as PoolManager
  const conn = await manager.getConnection({ type: 'read' })
  const villages = new Map(((await conn.query('SELECT id, code FROM villages WHERE organisation_id = ?', [organisationId])) as Array<{ id: number, code: string }>).map(v => [Number(v.id), v.code]))
  // Farm level: one visit's rows are folded as they arrive, then written when the next visit starts.
  let current: { id: string, row: unknown[], rows: unknown[][] } | null = null
  const flushFarm = () => {
    if (!current) return
    const { row, rows } = current
    counts.rows++
    let complete = y.push(Number(row[at.adopted]) === 1 ? 'true' : 'false')
    cluster.push(request.cluster === 'farm' ? current.id : villages.get(Number(row[1])) ?? null)
    farmCovariates.forEach((q, j) => {
      if (!farmCols[j]!.push(text(row[at.farm + j]))) {
        complete = false
        missing(q.label)
      }
    })
    rowTerms.forEach(({ term, question, area }, j) => {
      const flags = rows.map(r => text(r[rowIndex.get(question.key)!]))
      const yes = flags.map(f => f === 'true' || f === '1')
      let v: number
      if (term.kind === 'any') v = yes.some(Boolean) ? 1 : 0
      else if (term.kind === 'share_rows') v = rows.length && flags.every(f => f !== null) ? yes.filter(Boolean).length / rows.length : Number.NaN
      else {
        const areas = rows.map(r => Number(text(r[rowIndex.get(area!.key)!]) ?? Number.NaN))
        const total = areas.reduce((a, b) => a + b, 0)
        v = rows.length && total > 0 && flags.every(f => f !== null) ? areas.reduce((a, b, i) => a + (yes[i] ? b : 0), 0) / total : Number.NaN
      }
      if (!termCols[j]!.pushNumber(v)) {
        complete = false
        missing(plotTermColumn(term))
      }
    })
    if (complete) counts.kept++
  }
  try {
    await conn.query('START TRANSACTION WITH CONSISTENT SNAPSHOT, READ ONLY')
    await eachRow(conn.queryStream({ sql, rowsAsArray: true, typeCast: null }, params), (row) => {
      const id = String(row[0])
      const hasRow = row[at.rn] !== null
      if (!current || current.id !== id) {
        if (request.level === 'farm') flushFarm()
        counts.farms++
        if (!hasRow) counts.farmsWithoutRows++
        current = { id, row, rows: [] }
      }
      if (!hasRow) return
      if (request.level === 'farm') {
        current.rows.push(row)
        return
      }
      counts.rows++
      let complete = y.push(text(row[rowIndex.get(outcome!.key)!]))
      if (!complete) missing(outcome!.label)
      cluster.push(request.cluster === 'farm' ? id : villages.get(Number(row[1])) ?? null)
      rowCovariates.forEach((q, j) => {
        if (!rowCols[j]!.push(text(row[rowIndex.get(q.key)!]))) {
          complete = false
          missing(q.label)
        }
      })
      farmCovariates.forEach((q, j) => {
        if (!farmCols[j]!.push(text(row[at.farm + j]))) {
          complete = false
          missing(q.label)
        }
      })
      if (complete) counts.kept++
    })
    if (request.level === 'farm') flushFarm()
    await conn.query('COMMIT')
  }
  catch (error) {
    await conn.query('ROLLBACK').catch(() => {})
    throw error
  }
  finally {
    await manager.releaseConnection(conn)
  }

  const columns: Record<string, ArrayLike<unknown> | CodedColumn> = { [ROW_OUTCOME]: y.output(), [CLUSTER_COLUMN]: cluster.output() }
  const covariates: CovariateSpec[] = []
  rowCovariates.forEach((q, j) => {
    columns[q.key] = rowCols[j]!.output()
    covariates.push({ name: q.key, label: q.label, type: typeOf(q) })
  })
  farmCovariates.forEach((q, j) => {
    columns[q.key] = farmCols[j]!.output()
    covariates.push({ name: q.key, label: q.label, type: typeOf(q) })
  })
  rowTerms.forEach(({ term, question }, j) => {
    const name = plotTermColumn(term)
    columns[name] = termCols[j]!.output()
    covariates.push({ name, label: `${question.label}: ${term.kind === 'any' ? 'on any plot' : term.kind === 'share_rows' ? 'share of plots' : 'share of area'}`, type: term.kind === 'any' ? 'yesno' : 'numeric' })
  })
  return {
    columns,
    covariates,
    outcome: ROW_OUTCOME,
    outcomeLabel: outcome?.label ?? 'Adopted',
    counts,
    group
  }
}
