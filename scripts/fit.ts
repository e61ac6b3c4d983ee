/**
 * Fit a binary adoption model to a CSV file with the Furrowcast engine.
 *
 *   npm run fit -- FILE.csv --outcome COL [--covariates a,b,c] [--categorical c]
 *     [--link probit|logit|cloglog|cauchit] [--se conventional|robust|hc1|cluster:COL]
 *     [--weights COL] [--margins ame|mem] [--separator ';'] [--decimal ,] [--json]
 *     [--random-intercept COL [--quad-points N]]            village random intercept
 *     [--strata COL] [--psu COL] [--fpc COL] (with --weights) survey design
 *     [--rounds COL] [--panel-id COL]                        several rounds (CRE with --random-intercept)
 *     [--hetero a,b] [--link-test]                           model checks
 *
 * Without --covariates every other column is used (except weights, cluster and an unnamed
 * row-number column). Text columns with two yes/no (or true/false) values become yes/no
 * covariates; other text columns must be listed in --categorical. Problems with the file,
 * the columns or the outcome print ONE line on stderr and exit with code 2.
 *
 * The separator is read from the header line (comma, semicolon, tab or vertical bar) unless --separator names
 * it; numeric cells must be decimal notation with the declared decimal separator (--decimal, '.' by default),
 * see scripts/lib/csv-columns.ts. A header naming one column twice is refused.
 */
import { EngineInputError, runModel, toYesNo, type CovariateSpec, type CovarianceType, type LinkName, type ModelResults, type ModelSpec } from '../shared/utils/stats/index'
import { isMainThread } from 'node:worker_threads'
import { kernelArrayBuffer } from '../server/workers/pass-kernel'
import { PARALLEL_MIN_ROWS, startPassHelpers } from '../server/workers/pass-pool'
import { CsvError, readCsvColumns, separatorLabel, type CsvColumn, type CsvTable } from './lib/csv-columns'

class UsageError extends Error {}

interface Args {
  file: string
  outcome: string
  covariates: string[] | null
  categorical: string[]
  link: LinkName
  se: string
  weights: string | null
  margins: 'ame' | 'mem'
  json: boolean
  separator: string | undefined
  decimal: string | undefined
  model: ModelArgs
}

/** Options for the village treatment, rounds and checks (see the usage above). */
interface ModelArgs {
  randomIntercept?: string
  quadPoints?: number
  strata?: string
  psu?: string
  fpc?: string
  rounds?: string
  panelId?: string
  hetero?: string[]
  linkTest?: boolean
}

function parseArgs(argv: string[]): Args {
  const a: Partial<Args> & { categorical: string[], model: ModelArgs } = { categorical: [], json: false, model: {} }
  const rest: string[] = []
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i]!
    const value = (): string => {
      const v = argv[++i]
      if (v === undefined || v.startsWith('--')) throw new UsageError(`${arg} needs a value`)
      return v
    }
    const list = (): string[] => value().split(',').map(s => s.trim()).filter(Boolean)
    switch (arg) {
      case '--outcome':
        a.outcome = value()
        break
      case '--covariates':
        a.covariates = list()
        break
      case '--categorical':
        a.categorical.push(...list())
        break
      case '--link':
        a.link = value() as LinkName
        break
      case '--se':
        a.se = value()
        break
      case '--weights':
        a.weights = value()
        break
      case '--margins':
        a.margins = value() as 'ame' | 'mem'
        break
      case '--json':
        a.json = true
        break
      case '--separator':
        a.separator = value() === '\\t' ? '\t' : argv[i]
        break
      case '--decimal':
        a.decimal = value()
        break
      case '--random-intercept':
        a.model.randomIntercept = value()
        break
      case '--quad-points': {
        const q = Number(value())
        if (!Number.isInteger(q) || q < 1 || q > 100) throw new UsageError('--quad-points must be a whole number from 1 to 100')
        a.model.quadPoints = q
        break
      }
      case '--strata':
        a.model.strata = value()
        break
      case '--psu':
        a.model.psu = value()
        break
      case '--fpc':
        a.model.fpc = value()
        break
      case '--rounds':
        a.model.rounds = value()
        break
      case '--panel-id':
        a.model.panelId = value()
        break
      case '--hetero':
        a.model.hetero = list()
        break
      case '--link-test':
        a.model.linkTest = true
        break
      default:
        if (arg.startsWith('--')) throw new UsageError(`unknown option ${arg}`)
        rest.push(arg)
    }
  }
  if (rest.length !== 1) throw new UsageError('usage: fit FILE.csv --outcome COL [options]')
  if (!a.outcome) throw new UsageError('--outcome COL is required')
  const link = a.link ?? 'probit'
  if (!['probit', 'logit', 'cloglog', 'cauchit'].includes(link)) throw new UsageError(`--link must be probit, logit, cloglog or cauchit (got '${link}')`)
  const margins = a.margins ?? 'ame'
  if (margins !== 'ame' && margins !== 'mem') throw new UsageError(`--margins must be ame or mem (got '${String(margins)}')`)
  return {
    file: rest[0]!, outcome: a.outcome, covariates: a.covariates ?? null, categorical: a.categorical,
    link, se: a.se ?? 'conventional', weights: a.weights ?? null, margins, json: a.json, separator: a.separator, decimal: a.decimal, model: a.model
  }
}

/** Engine input: typed arrays for complete numeric columns, plain arrays where cells are missing or text. */
function engineColumns(table: CsvTable, used: Set<string>): Record<string, ArrayLike<unknown>> {
  const out: Record<string, ArrayLike<unknown>> = {}
  for (const c of table.columns) {
    if (!used.has(c.name)) continue
    if (!c.text && c.missing === 0) out[c.name] = c.values
    else {
      const arr = new Array<string | number | null>(table.rows)
      for (let r = 0; r < table.rows; r++) {
        const v = c.values[r]!
        arr[r] = Number.isNaN(v) ? (c.text?.get(r) ?? null) : v
      }
      out[c.name] = arr
    }
  }
  return out
}

/** The first text cell of a mostly numeric column, as a per-cell refusal naming the line. */
function notDecimal(table: CsvTable, c: CsvColumn, decimal: string): UsageError {
  const [row, cell] = [...c.text!.entries()].sort((p, q) => p[0] - q[0])[0]!
  const comma = decimal === '.' && /^[-+]?\d+,\d+$/.test(cell) ? ' (a decimal comma? pass --decimal ,)' : decimal === ',' && /^[-+]?\d+\.\d+$/.test(cell) ? ` (the decimal separator was declared as ',')` : ''
  return new UsageError(`column '${c.name}', line ${table.lineOfRow(row)}: '${cell}' is not a decimal number${comma}; write numbers as digits with an optional '${decimal}' and exponent, or leave the cell empty`)
}

function buildSpec(args: Args, table: CsvTable): { spec: ModelSpec, used: Set<string> } {
  const header = table.columns.map(c => c.name)
  const byName = new Map(table.columns.map(c => [c.name, c]))
  const need = (c: string, role: string): void => {
    if (!byName.has(c)) {
      const hint = header.length === 1 && /[;\t|]/.test(header[0]!) ? ` (the header has one column: is the file separated by something else? pass --separator)` : ''
      throw new UsageError(`unknown column '${c}' (${role}); the file has: ${header.filter(Boolean).join(', ')}${hint}`)
    }
  }
  need(args.outcome, 'outcome')
  let cluster: string | undefined
  let se: CovarianceType
  if (args.se.startsWith('cluster:')) {
    cluster = args.se.slice('cluster:'.length)
    need(cluster, 'cluster')
    se = 'cluster'
  }
  else if (args.se === 'robust') se = 'hc0'
  else if (args.se === 'hc1' || args.se === 'conventional') se = args.se
  else throw new UsageError(`--se must be conventional, robust, hc1 or cluster:COL (got '${args.se}')`)
  if (args.weights) need(args.weights, 'weights')
  for (const c of args.categorical) need(c, 'categorical')
  const m = args.model
  if (m.quadPoints !== undefined && !m.randomIntercept) throw new UsageError('--quad-points goes with --random-intercept')
  if ((m.strata || m.psu || m.fpc) && !args.weights) throw new UsageError('a survey design (--strata, --psu, --fpc) needs --weights')
  if (m.randomIntercept && (m.strata || m.psu || m.fpc)) throw new UsageError('choose either --random-intercept or a survey design, not both')
  for (const [c, role] of [[m.randomIntercept, 'random intercept'], [m.strata, 'strata'], [m.psu, 'psu'], [m.fpc, 'fpc'], [m.rounds, 'rounds'], [m.panelId, 'panel id']] as const) {
    if (c) need(c, role)
  }
  const roles = new Set([args.outcome, args.weights, cluster, m.randomIntercept, m.strata, m.psu, m.fpc, m.rounds, m.panelId])
  const names = args.covariates ?? header.filter(h => h !== '' && !roles.has(h))
  for (const c of names) need(c, 'covariate')
  if (!names.length) throw new UsageError('no covariates to use')
  const decimal = args.decimal ?? '.'
  const covariates: CovariateSpec[] = names.map((name) => {
    if (args.categorical.includes(name)) return { name, type: 'categorical' }
    const col = byName.get(name)!
    if (!col.text) return { name, type: 'numeric' }
    const distinct = new Set<string>()
    for (const t of col.text.values()) distinct.add(t.trim().toLowerCase())
    for (let r = 0; r < table.rows && distinct.size <= 2; r++) if (!Number.isNaN(col.values[r]!)) distinct.add(String(col.values[r]))
    if (distinct.size <= 2 && [...distinct].every(v => toYesNo(v) !== null)) return { name, type: 'yesno' }
    const numbers = table.rows - col.missing - col.text.size
    const firstText = col.text.values().next().value ?? ''
    if (numbers >= col.text.size || /^[-+]?\d+[.,]\d+$/.test(firstText.trim())) throw notDecimal(table, col, decimal)
    throw new UsageError(`column '${name}' holds text; list it in --categorical to use it as categories`)
  })
  if (args.weights) {
    const col = byName.get(args.weights)!
    if (col.text) throw notDecimal(table, col, decimal)
  }
  const survey = Boolean(m.strata || m.psu || m.fpc)
  const modelColumns = [m.randomIntercept, m.strata, m.psu, m.fpc, m.rounds, m.panelId].filter((c): c is string => Boolean(c))
  const used = new Set<string>([args.outcome, ...names, ...(args.weights ? [args.weights] : []), ...(cluster ? [cluster] : []), ...modelColumns])
  return {
    spec: {
      outcome: args.outcome, covariates, link: args.link, se, cluster: m.randomIntercept ?? m.psu ?? cluster, weights: args.weights ?? undefined, margins: args.margins,
      villageTreatment: m.randomIntercept ? 'random-intercept' : survey ? 'survey' : undefined,
      quadPoints: m.quadPoints, strata: m.strata, fpc: m.fpc, rounds: m.rounds, panelId: m.panelId,
      checks: m.hetero || m.linkTest ? { hetero: m.hetero, linkTest: m.linkTest } : undefined
    },
    used
  }
}

function fmt(x: number | null, digits = 4): string {
  if (x === null) return '—'
  if (x !== 0 && (Math.abs(x) < 1e-3 || Math.abs(x) >= 1e5)) return x.toExponential(digits - 1)
  return x.toFixed(digits)
}

function pfmt(p: number | null): string {
  if (p === null) return '—'
  return p < 0.0001 ? '<0.0001' : p.toFixed(4)
}

function table(head: string[], rows: string[][]): string {
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map(r => r[i]!.length)))
  const line = (r: string[]): string => r.map((c, i) => (i === 0 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('   ')
  return [line(head), widths.map(w => '·'.repeat(w)).join('   '), ...rows.map(line)].join('\n')
}

function report(res: ModelResults, file: string): string {
  const f = res.fit
  const se = res.villageTreatment === 'random-intercept'
    ? `model-based, with a random intercept for ${res.cluster} (${res.covariance.clusters} groups)`
    : {
        conventional: 'model-based', hc0: 'robust (HC0)', hc1: 'robust (HC1, N/(N−K))', cluster: `clustered by ${res.cluster} (${res.covariance.clusters} groups)`,
        survey: `survey design (linearisation; ${res.survey?.psuCount} PSUs in ${res.survey?.strataCount} strata, ${res.survey?.df} design df)`
      }[res.covariance.type]
  const out: string[] = []
  out.push(`Adoption model for '${res.outcome.label}' — ${res.link} link — ${file}`)
  out.push(`Farms used: ${res.rows.used} of ${res.rows.totalRows}${res.rows.dropped ? ` (${res.rows.dropped} set aside for missing values)` : ''}; standard errors: ${se}`)
  out.push(`Estimation: ${res.converged ? 'converged' : 'DID NOT CONVERGE'} after ${res.iterations.length - 1} Newton steps in ${res.timings.fitMs.toFixed(1)} ms`)
  out.push('')
  out.push('Index coefficients (effects on x\'b, not on the probability)')
  out.push(table(['term', 'coef', 'std.err', 'z', 'p', '95% interval'], res.coefficients.map(c => [
    c.label, fmt(c.estimate), fmt(c.se), fmt(c.z, 2), pfmt(c.p), c.ciLow === null ? '—' : `${fmt(c.ciLow)} … ${fmt(c.ciHigh)}`
  ])))
  out.push('')
  if (res.margins) {
    const title = res.margins.kind === 'ame' ? 'averaged over the farms used' : 'at the mean farm'
    out.push(`Change in adoption probability (${title}; percentage points per unit or per switch)`)
    out.push(table(['covariate', 'effect', 'std.err', 'p', '95% interval', 'kind'], res.margins.effects.map(e => [
      e.label, fmt(100 * e.estimate, 2), e.se === null ? '—' : fmt(100 * e.se, 2), pfmt(e.p),
      e.ciLow === null ? '—' : `${fmt(100 * e.ciLow, 2)} … ${fmt(100 * e.ciHigh!, 2)}`, e.kind === 'discrete' ? 'switch' : 'slope'
    ])))
    out.push('')
  }
  out.push('How well the model fits')
  if (f.notAvailable) {
    out.push(`  pseudo-log-likelihood ${fmt(f.loglik, 3)} (it scales with the weights); area under ROC ${fmt(res.roc.auc, 4)}`)
    out.push(`  ${f.notAvailable}`)
  }
  else {
    out.push(`  log-likelihood ${fmt(f.loglik, 3)} (intercept only ${fmt(f.loglikNull, 3)}); LR χ² ${fmt(f.lrChi2, 2)} on ${f.lrDf} df, p ${pfmt(f.lrP)}`)
    out.push(`  McFadden R² ${fmt(f.mcfaddenR2, 4)}; AIC ${fmt(f.aic, 2)}; BIC ${fmt(f.bic, 2)}; area under ROC ${fmt(res.roc.auc, 4)}`)
  }
  if (f.wald) out.push(`  Wald test that all slopes are 0: ${f.wald.kind === 'F' ? `F ${fmt(f.wald.statistic, 2)} on (${f.wald.df}, ${f.wald.df2}) df` : `χ² ${fmt(f.wald.statistic, 2)} on ${f.wald.df} df`}, p ${pfmt(f.wald.p)}`)
  const c = res.classification
  out.push(`  at cut-off ${c.cutoff}: ${fmt(100 * c.shareCorrect, 1)}% classified correctly (sensitivity ${c.sensitivity === null ? '—' : fmt(100 * c.sensitivity, 1)}%, specificity ${c.specificity === null ? '—' : fmt(100 * c.specificity, 1)}%)`)
  if (res.designGof) {
    const g = res.designGof
    out.push(g.statistic !== null
      ? `  Archer–Lemeshow (weighted, design-adjusted) over ${g.groups.length} groups: F ${fmt(g.statistic, 2)} on (${g.numDf}, ${g.denDf}) df, p ${pfmt(g.p!)}`
      : `  Archer–Lemeshow (weighted, design-adjusted): ${g.reading}`)
  }
  if (res.hosmerLemeshow) out.push(`  Hosmer–Lemeshow over ${res.hosmerLemeshow.groups.length} groups: ${fmt(res.hosmerLemeshow.statistic, 2)} on ${res.hosmerLemeshow.df} df, p ${pfmt(res.hosmerLemeshow.p)}`)
  out.push('')
  out.push(...modelSections(res))
  if (res.warnings.length) {
    out.push('Points to check')
    for (const w of res.warnings) out.push(`  • [${w.code}] ${w.message}`)
    out.push('')
  }
  out.push('Caution: these are associations in the recorded farms, not causal effects of the covariates on adoption.')
  return out.join('\n')
}

/** Lines for what the village treatment, rounds and checks add. */
function modelSections(res: ModelResults): string[] {
  const out: string[] = []
  const ri = res.randomIntercept
  if (ri) {
    out.push(`Village random intercept (${ri.quadPoints}-point adaptive quadrature)`)
    out.push(`  σ (SD of the village effect on the index) ${fmt(ri.sigma.estimate)} (std.err ${fmt(ri.sigma.se)}); share of latent variation between groups ρ ${fmt(ri.rho.estimate)}`)
    out.push(`  LR test of σ = 0: ${fmt(ri.lrTest.statistic, 2)}, p ${pfmt(ri.lrTest.p)} (half χ²₁, σ = 0 is on the boundary). ${ri.lrTest.reading}`)
    out.push(`  With ${ri.quadratureCheck.points} points the estimates move by at most ${fmt(ri.quadratureCheck.maxChangeInSe, 2)} standard errors${ri.quadratureCheck.stable ? '' : ' — use more points'}`)
    out.push('')
  }
  const sv = res.survey
  if (sv) {
    out.push(`Survey design: design-based Wald test of all slopes F = ${fmt(sv.wald.statistic, 2)} on (${sv.wald.numDf}, ${sv.wald.denDf}) df, p ${pfmt(sv.wald.p)}; the z column above is t on ${sv.df} df`)
    out.push(`  ${sv.note}`)
    out.push('')
  }
  const rd = res.rounds
  if (rd?.transitions.length) {
    out.push('Adoption between rounds (farms seen in both)')
    out.push(table(['rounds', 'farms', 'stayed non', 'adopted', 'dis-adopted', 'stayed adopter'], rd.transitions.map(t => [
      `${t.from} → ${t.to}`, String(t.farmsInBoth), String(t.stayedNon), String(t.adopted), String(t.disAdopted), String(t.stayedAdopter)
    ])))
    out.push('')
  }
  if (rd?.farmMeans.length) out.push(`Farm means added for: ${rd.farmMeans.join(', ')} (correlated random effects)`, '')
  const ch = res.checks
  if (ch?.linkTest) out.push(`Link test: squared index ${fmt(ch.linkTest.indexSquared.estimate)} (p ${pfmt(ch.linkTest.indexSquared.p)}). ${ch.linkTest.reading}`)
  if (ch?.hetero) out.push(`Heteroskedasticity: LR ${fmt(ch.hetero.lrTest.statistic, 2)} on ${ch.hetero.lrTest.df} df, p ${pfmt(ch.hetero.lrTest.p)}. ${ch.hetero.reading}`)
  if (ch) out.push('')
  return out
}

async function main(): Promise<void> {
  const args = parseArgs(process.argv.slice(2))
  const t0 = performance.now()
  let table: CsvTable
  try {
    table = readCsvColumns(args.file, { separator: args.separator, decimal: args.decimal })
  }
  catch (e) {
    if (e instanceof CsvError) throw new UsageError(e.message)
    throw e
  }
  const readMs = performance.now() - t0
  const { spec, used } = buildSpec(args, table)
  // Large files: the row passes on every core (threads over shared memory, see server/workers/pass-pool.ts).
  const helpers = table.rows >= PARALLEL_MIN_ROWS ? await startPassHelpers(new URL(import.meta.url)) : null
  let results: ModelResults
  try {
    results = runModel(engineColumns(table, used), spec, {
      // The design built in shared memory from the start, so the helper threads read it without a copy (at 10^6 rows
      // the copy took 60 ms and one more 88 MB matrix); in WebAssembly memories, which the pass kernel reads.
      arrayBuffer: helpers ? kernelArrayBuffer : undefined,
      parallel: (design, link) => (helpers && design.n >= PARALLEL_MIN_ROWS ? helpers.attach(design, link) : null)
    })
  }
  finally {
    void helpers?.close()
  }
  if (args.json) process.stdout.write(`${JSON.stringify({ ...results, timings: { ...results.timings, readMs } }, null, 2)}\n`)
  else {
    const sep = table.separator === ',' ? '' : ` (columns separated by ${separatorLabel(table.separator)})`
    process.stdout.write(`${report(results, `${args.file}${sep}`)}\n`)
  }
}

// Helper threads of the pass pool load this same file: only the main thread runs the command.
async function cli(): Promise<void> {
  try {
    await main()
  }
  catch (e) {
    if (e instanceof UsageError || e instanceof EngineInputError || e instanceof CsvError) {
      process.stderr.write(`fit: ${e.message}\n`)
      process.exit(2)
    }
    throw e
  }
}

if (isMainThread) void cli()
