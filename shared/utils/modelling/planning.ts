// Planning the next round from the current one: how much between-village variation there is, what it
// costs in sample size, and how many villages and farms give a chosen precision.

export interface VillageCount {
  n: number
  /** Share of the village's visited farms that adopted. */
  observedRate: number
}

const Z95 = 1.959963984540054

/**
 * Intra-cluster correlation of adoption by the one-way ANOVA estimator (for unequal cluster sizes,
 * with n₀ = (N − Σnⱼ²/N)/(J − 1)); see Donner (1986), Int. Stat. Review 54, 67–82 (recalled from memory).
 * Truncated at 0: a negative estimate means no detectable clustering.
 */
export function intraClusterCorrelation(villages: readonly VillageCount[]): number {
  const J = villages.length
  const N = villages.reduce((s, v) => s + v.n, 0)
  if (J < 2 || N <= J) return 0
  const mean = villages.reduce((s, v) => s + v.n * v.observedRate, 0) / N
  const msb = villages.reduce((s, v) => s + v.n * (v.observedRate - mean) ** 2, 0) / (J - 1)
  // Within-village sum of squares of 0/1 outcomes: n·p·(1 − p) per village.
  const msw = villages.reduce((s, v) => s + v.n * v.observedRate * (1 - v.observedRate), 0) / (N - J)
  const n0 = (N - villages.reduce((s, v) => s + v.n * v.n, 0) / N) / (J - 1)
  const denominator = msb + (n0 - 1) * msw
  return denominator > 0 ? Math.max(0, (msb - msw) / denominator) : 0
}

/** Kish's design effect for clusters of m farms: 1 + (m − 1)·ICC. */
export function designEffect(farmsPerVillage: number, icc: number): number {
  return 1 + (farmsPerVillage - 1) * icc
}

export interface PlanInput {
  icc: number
  /** Expected adoption rate (use the current round's). */
  adoptionRate: number
  farmsPerVillage: number
  /** Half-width of the 95 % confidence interval, as a share (0.05 = ±5 points). */
  margin: number
}

export interface Plan {
  designEffect: number
  /** Farms needed in each village to know that village's own rate within the margin. */
  farmsPerVillageForVillageRate: number
  /** Villages needed (at farmsPerVillage each) to know the overall rate within the margin. */
  villagesForOverallRate: number
  totalFarms: number
}

/** Sample sizes for a proportion under cluster sampling (common practice: n = z²p(1−p)/e² times the design effect). */
export function planForAdoptionRate(input: PlanInput): Plan {
  if (!(input.margin > 0 && input.margin < 0.5)) throw new RangeError('The margin must be between 0 and 0.5')
  if (!(input.farmsPerVillage >= 1)) throw new RangeError('At least one farm per village')
  const p = Math.min(Math.max(input.adoptionRate, 0.01), 0.99)
  const simple = (Z95 ** 2 * p * (1 - p)) / input.margin ** 2
  const deff = designEffect(input.farmsPerVillage, input.icc)
  const villages = Math.ceil((simple * deff) / input.farmsPerVillage)
  return {
    designEffect: deff,
    farmsPerVillageForVillageRate: Math.ceil(simple),
    villagesForOverallRate: villages,
    totalFarms: villages * input.farmsPerVillage
  }
}

export interface EffectPlanInput {
  icc: number
  currentSe: number
  currentVillages: number
  currentFarmsPerVillage: number
  farmsPerVillage: number
  /** The standard error wanted for the marginal effect. */
  targetSe: number
}

/**
 * Villages needed for a marginal effect to reach a target standard error, scaling the current
 * cluster-robust SE by the effective sample size J·m/deff(m). An approximation that assumes the same
 * mix of farms and villages as the current round.
 */
export function villagesForEffect(input: EffectPlanInput): number {
  if (!(input.targetSe > 0)) throw new RangeError('The target standard error must be positive')
  const effective = (villages: number, m: number) => (villages * m) / designEffect(m, input.icc)
  const currentEffective = effective(input.currentVillages, input.currentFarmsPerVillage)
  const neededEffective = currentEffective * (input.currentSe / input.targetSe) ** 2
  return Math.ceil(neededEffective / (input.farmsPerVillage / designEffect(input.farmsPerVillage, input.icc)))
}
