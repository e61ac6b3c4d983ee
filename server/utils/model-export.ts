import { MODEL_CAUTIONS } from '#shared/utils/cautions'
import { CERTAINTY_LEVELS, certaintyOf, covariateUnits, singular } from '#shared/utils/modelling/reading'
import { LINK_LABELS } from '#shared/utils/modelling/request'
import { WARNING_WORDS } from '#shared/utils/modelling/warnings'
import type { ModelResults } from '#shared/utils/stats'
import type { ModelRun } from '../db/models'

// A fit's results as separate rectangular tables, in the units the results page shows: changes and ranges in
// percentage points, village rates in percent. The cautions and what each file holds go in a read-me beside them.

export const MODEL_TABLES = ['effects', 'coefficients', 'villages', 'fit', 'scenarios', 'transitions'] as const
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
  if (table === 'transitions') return transitionsCsv(r)
  if (table === 'scenarios') {
    const villageLevels = r.villageTreatment === 'random-intercept'
    return csvTable(
      ['scenario', 'what_changes', 'village_code', 'village', 'before_percent', 'after_percent', 'change_points', 'range_low_points', 'range_high_points', 'standard_error_points', 'basis'],
      r.scenarios.flatMap(sc => [
        [sc.name, sc.description, 'all', 'all villages', points(sc.overall.baseline), points(sc.overall.scenario), points(sc.overall.estimate), points(sc.overall.ciLow), points(sc.overall.ciHigh), points(sc.overall.se),
          villageLevels ? 'averaged over how villages differ' : 'mean over the farms used'],
        ...sc.villages.map(v => [sc.name, sc.description, v.village, villageNames[v.village] ?? '', points(v.baseline), points(v.scenario), points(v.estimate), points(v.ciLow), points(v.ciHigh), points(v.se),
          villageLevels ? 'from the village\'s own predicted level' : 'mean over the village\'s farms'])
      ])
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
    ['predicted_against_observed_p', plain(r.hosmerLemeshow?.p), 'Hosmer–Lemeshow test over ten groups of farms: a small p means groups adopt more or less often than predicted (empty for weighted fits)'],
    ...designGofRows(r),
    ...villageModelRows(r),
    ...checkRows(r),
    ...r.warnings.map(w => [`warning_${w.code}`, null, WARNING_WORDS[w.code] ? `${WARNING_WORDS[w.code]}: ${w.message}` : w.message])
  ])
}

type Rows = Array<[string, number | null, string]>

/** Weighted fits: the design-adjusted test in place of Hosmer–Lemeshow. */
function designGofRows(r: ModelResults): Rows {
  const g = r.designGof
  if (!g) return []
  return [
    ['weighted_predicted_against_observed_f', plain(g.statistic), 'Archer–Lemeshow test for weighted samples: F over ten weighted groups of farms, allowing for the sampling'],
    ['weighted_predicted_against_observed_df1', g.numDf, 'Its numerator degrees of freedom (groups − 1)'],
    ['weighted_predicted_against_observed_df2', g.denDf, 'Its denominator degrees of freedom (design degrees of freedom − groups + 2)'],
    ['weighted_predicted_against_observed_p', plain(g.p), g.reading]
  ]
}

/** What the village random intercept or the sampling plan adds. */
function villageModelRows(r: ModelResults): Rows {
  const ri = r.randomIntercept
  if (ri) {
    return [
      ['village_sd', plain(ri.sigma.estimate), 'Standard deviation of the village levels on the model\'s hidden scale (σ)'],
      ['village_sd_standard_error', plain(ri.sigma.se), 'Its standard error'],
      ['share_between_villages', plain(ri.rho.estimate), 'Share of the hidden variation that lies between villages (ρ)'],
      ['no_village_differences_chi2', plain(ri.lrTest.statistic), 'Likelihood-ratio test of σ = 0 (half χ² with 1 df, as σ cannot be below 0)'],
      ['no_village_differences_p', plain(ri.lrTest.p), ri.lrTest.reading],
      ['quadrature_points', ri.quadPoints, ri.quadratureCheck.stable ? 'Points per village; twice as many do not change the estimates' : 'Points per village; twice as many would change the estimates: fit again with more']
    ]
  }
  const sv = r.survey
  if (sv) {
    return [
      ['sampled_villages', sv.psuCount, 'Primary sampling units of the design'],
      ['strata', sv.strataCount, 'Strata of the design'],
      ['design_degrees_of_freedom', sv.df, 'Sampled villages − strata: intervals and tests use t and F on these'],
      ['all_characteristics_design_f', plain(sv.wald.statistic), 'Wald test of all characteristics together, with the design\'s degrees of freedom'],
      ['all_characteristics_design_p', plain(sv.wald.p), 'p-value of that test']
    ]
  }
  return []
}

/** The checks asked for in the builder. */
function checkRows(r: ModelResults): Rows {
  const c = r.checks
  if (!c) return []
  const rows: Rows = []
  if (c.linkTest) {
    rows.push(['link_test_square_coefficient', plain(c.linkTest.indexSquared.estimate), 'Link test: coefficient of the squared score added to the model'])
    rows.push(['link_test_p', plain(c.linkTest.indexSquared.p), c.linkTest.reading])
  }
  if (c.hetero) {
    rows.push(['uneven_spread_chi2', plain(c.hetero.lrTest.statistic), `Likelihood-ratio test of an even spread against a spread that changes with ${c.hetero.variance.map(v => v.label.replace(/^variance: /, '')).join(', ')} (heteroskedastic probit)`])
    rows.push(['uneven_spread_df', c.hetero.lrTest.df, 'Its degrees of freedom'])
    rows.push(['uneven_spread_p', plain(c.hetero.lrTest.p), c.hetero.reading])
  }
  return rows
}

/** Several rounds: adoption and dis-adoption between consecutive rounds (farms of the register seen in both). */
function transitionsCsv(r: ModelResults): string {
  return csvTable(
    ['from_round', 'to_round', 'farms_in_both', 'stayed_non_adopters', 'adopted', 'dis_adopted', 'stayed_adopters', 'adoption_rate_percent', 'dis_adoption_rate_percent'],
    (r.rounds?.transitions ?? []).map(t => [t.from, t.to, t.farmsInBoth, t.stayedNon, t.adopted, t.disAdopted, t.stayedAdopter, points(t.adoptionRate), points(t.disAdoptionRate)])
  )
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
    '- fit.csv: how well the model predicts, each measure with its meaning, the village model\'s or sampling plan\'s figures, the checks asked for and the warnings.',
    '- scenarios.csv: the what-if predictions, overall (village "all") and by village, in percent and percentage points.',
    ...(r.rounds
      ? ['- transitions.csv: between consecutive rounds, the farms of the farm register seen in both: how many stayed non-adopters,',
          '  adopted, gave up (dis-adopted) or stayed adopters, with the adoption and dis-adoption rates. The round effects are the',
          '  "round" rows of effects.csv and coefficients.csv (compared with the first round).']
      : []),
    '',
    `How sure: ${CERTAINTY_LEVELS.map(l => `${l.words} (${l.rule})`).join('; ')}.`,
    ''
  ].join('\n')
}

export function modelZip(run: ModelRun, villageNames: Record<string, string>): Uint8Array {
  return zipFiles({
    'README.txt': modelReadme(run),
    ...Object.fromEntries(MODEL_TABLES.filter(t => t !== 'transitions' || run.results?.rounds).map(t => [`${t}.csv`, modelTableCsv(run, t, villageNames)]))
  })
}
