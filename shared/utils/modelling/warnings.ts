import type { EngineWarningCode } from '../stats/errors'

/**
 * A short heading per warning of the village models and the sampling plan, shown before the
 * engine's sentence on the results page and in the exports. Older codes have their sentence only.
 */
export const WARNING_WORDS: Partial<Record<EngineWarningCode, string>> = {
  few_villages: 'Few villages',
  sigma_on_boundary: 'No difference between villages',
  quadrature_unstable: 'Village integral not settled',
  few_psus: 'Few sampled villages',
  singleton_stratum: 'A stratum with one sampled village'
}
