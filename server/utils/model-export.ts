import { MODEL_CAUTIONS } from '#shared/utils/cautions'
import type { ModelRun } from '../db/models'

const row = csvRow

/** A run's tables as CSV, the cautions first, so they travel with the numbers. */
export function runAsCsv(run: ModelRun, villageNames: Record<string, string>): string {
  const r = run.results!
  const lines: string[] = [
    // Comment lines, written as they are (not CSV-quoted): spreadsheet and data tools skip or show them whole.
    ...MODEL_CAUTIONS.map(c => `# ${c}`),
    `# Furrowcast model run ${run.id}; engine ${run.engineVersion}; rows hash ${run.rowsHash}; link ${r.link}; standard errors ${r.covariance.type}`,
    '',
    row(['section', 'term', 'estimate', 'se', 'z', 'p', 'ci_low', 'ci_high'])
  ]
  for (const c of r.coefficients) lines.push(row(['coefficient', c.label, c.estimate, c.se, c.z, c.p, c.ciLow, c.ciHigh]))
  for (const e of r.margins?.effects ?? []) lines.push(row([`marginal_effect_${r.margins!.kind}`, e.label, e.estimate, e.se, e.z, e.p, e.ciLow, e.ciHigh]))
  lines.push('', row(['village_code', 'village', 'visits', 'observed_rate', 'predicted_mean', 'se', 'ci_low', 'ci_high']))
  for (const v of r.villages ?? []) lines.push(row([v.village, villageNames[v.village] ?? '', v.n, v.observedRate, v.estimate, v.se, v.ciLow, v.ciHigh]))
  lines.push('', row(['statistic', 'value']))
  for (const [k, v] of Object.entries(r.fit)) lines.push(row([k, v]))
  lines.push(row(['auc', r.roc.auc]))
  for (const w of r.warnings) lines.push(row(['warning', w.message]))
  return `${lines.join('\n')}\n`
}
