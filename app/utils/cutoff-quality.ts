import type { ModelResults } from '#shared/utils/stats'

/**
 * How the model sorts farms when those predicted above the observed adoption share count as likely adopters:
 * read off the ROC points (each carries its threshold), so no cut at one half is assumed.
 */
export function cutoffQuality(results: ModelResults): { threshold: number, adoptersFound: number, othersFound: number } | null {
  const rate = results.overall.observedRate
  const points = results.roc.points.filter(p => Number.isFinite(p.threshold))
  if (!points.length || !Number.isFinite(rate)) return null
  const nearest = points.reduce((best, p) => Math.abs(p.threshold - rate) < Math.abs(best.threshold - rate) ? p : best)
  return { threshold: nearest.threshold, adoptersFound: nearest.truePositiveRate, othersFound: 1 - nearest.falsePositiveRate }
}
