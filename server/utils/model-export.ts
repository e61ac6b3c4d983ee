import { MODEL_CAUTIONS } from '#shared/utils/cautions'
import { CERTAINTY_LEVELS, certaintyOf, covariateUnits, singular } from '#shared/utils/modelling/reading'
import { LINK_LABELS } from '#shared/utils/modelling/request'
import type { ModelRun } from '../db/models'

// A fit's results as separate rectangular tables, in the units the results page shows: changes and ranges in
// percentage points, village rates in percent. The cautions and what each file holds go in a read-me beside them.

export const MODEL_TABLES = ['effects', 'coefficients', 'villages', 'fit'] as const
export type ModelTable = typeof MODEL_TABLES[number]

const points = (v: number | null | undefined) => v === null || v === undefined || !Number.isFinite(v) ? null : Math.round(v * 100_000) / 1000
const plain = (v: number | null | undefined) => v === null || v === undefined || !Number.isFinite(v) ? null : v

export function modelTableCsv(run: ModelRun, table: ModelTable, villageNames: Record<string, string>): string {
  const r = run.results!
  if (table === 'effects') {
    const units = covariateUnits(run.spec.covariates)
    return csvTable(
      ['characteristic', 'change_measured', 'measured_over', 'change_points', 'range_low_points', 'range_high_points', 'standard_error_points', 'p_value', 'how_sure'],
      (r.margins?.effects ?? []).map((e) => {
        const unit = units[e.covariate]
        const what = e.kind === 'discrete' ? `${e.level} rather than ${e.reference}` : unit ? `per additional ${singular(unit)}` : 'per one-unit increase'
        const name = e.kind === 'discrete' ? e.label.replace(/: .* vs .*$/, '') : e.label
        return [name, what, r.margins!.kind === 'ame' ? 'all farms visited' : 'one typical farm', points(e.estimate), points(e.ciLow), points(e.ciHigh), points(e.se), plain(e.p), certaintyOf(e.p)?.words ?? '']
      })
    )
  }
  if (table === 'coefficients') {
    const logit = r.link === 'logit'
    return csvTable(
      ['term', 'characteristic', 'coefficient', 'range_low', 'range_high', 'p_value', 'standard_error', 'coefficient_over_error', ...(logit ? ['odds_ratio', 'odds_ratio_range_low', 'odds_ratio_range_high'] : [])],
      r.coefficients.map(c => [
        c.term, c.label, plain(c.estimate), plain(c.ciLow), plain(c.ciHigh), plain(c.p), plain(c.se), plain(c.z),
        ...(logit ? [Math.exp(c.estimate), c.ciLow === null ? null : Math.exp(c.ciLow), c.ciHigh === null ? null : Math.exp(c.ciHigh)] : [])
      ])
    )
  }
  if (table === 'villages') {
    return csvTable(
      ['village_code', 'village', 'visits', 'observed_adoption_percent', 'predicted_adoption_percent', 'range_low_percent', 'range_high_percent', 'standard_error_points'],
      (r.villages ?? []).map(v => [v.village, villageNames[v.village] ?? '', v.n, points(v.observedRate), points(v.estimate), points(v.ciLow), points(v.ciHigh), points(v.se)])
    )
  }
  const fit = r.fit as Partial<Record<keyof typeof r.fit, number | null>>
  return csvTable(['measure', 'value', 'meaning'], [
    ['farms_used', r.rows.used, 'Accepted visits with every answer the fit needs'],
    ['area_under_curve', plain(r.roc.auc), 'Chance that an adopter gets a higher predicted probability than a non-adopter (0.5 = coin toss)'],
    ['gain_over_overall_rate', plain(fit.mcfaddenR2), 'McFadden\'s measure: improvement over predicting every farm at the overall rate (empty for weighted fits)'],
    ['all_characteristics_chi2', plain(fit.lrChi2), 'Likelihood-ratio statistic against a fit with no characteristics (empty for weighted fits)'],
    ['all_characteristics_df', plain(fit.lrDf), 'Degrees of freedom of that test'],
    ['all_characteristics_p', plain(fit.lrP), 'p-value of that test'],
    ['log_likelihood', plain(fit.loglik), 'Of this fit (empty for weighted fits)'],
    ['log_likelihood_no_characteristics', plain(fit.loglikNull), 'Of a fit with the intercept only'],
    ['aic', plain(fit.aic), 'For choosing between fits of the same visits: lower is better'],
    ['bic', plain(fit.bic), 'As AIC, leaning more towards fewer characteristics'],
    ['predicted_against_observed_p', plain(r.hosmerLemeshow?.p), 'Hosmer–Lemeshow test over ten groups of farms: a small p means groups adopt more or less often than predicted'],
    ...r.warnings.map(w => ['warning', null, w.message])
  ])
}

/** What the zip holds and how to read it, with the cautions first. */
export function modelReadme(run: ModelRun): string {
  const r = run.results!
  return [
    `Furrowcast: fit ${run.id}`,
    '',
    ...MODEL_CAUTIONS.map(c => `- ${c}`),
    '',
    `Curve: ${LINK_LABELS[r.link as keyof typeof LINK_LABELS] ?? r.link}; standard errors: ${r.covariance.type}; farms used: ${r.rows.used}.`,
    `Engine ${run.engineVersion}; rows fingerprint ${run.rowsHash}; fitted ${run.createdAt.toISOString()}.`,
    '',
    'Files (each one table, its header on the first row):',
    '- effects.csv: what goes with adoption, in percentage points, as on the results page.',
    '- coefficients.csv: the coefficients inside the model\'s curve (and odds ratios for a logistic curve).',
    '- villages.csv: observed and predicted adoption by village, in percent.',
    '- fit.csv: how well the model predicts, each measure with its meaning.',
    '',
    `How sure: ${CERTAINTY_LEVELS.map(l => `${l.words} (${l.rule})`).join('; ')}.`,
    ''
  ].join('\n')
}

export function modelZip(run: ModelRun, villageNames: Record<string, string>): Uint8Array {
  return zipFiles({
    'README.txt': modelReadme(run),
    ...Object.fromEntries(MODEL_TABLES.map(t => [`${t}.csv`, modelTableCsv(run, t, villageNames)]))
  })
}
