/**
 * Link functions for binary choice models P(y = 1 | x) = F(x'b).
 *
 * Every link is a distribution function F with its density f = F', the density's
 * derivative f', and the two log tails log F(t) and log(1 − F(t)) computed directly
 * (never as log of a clipped probability), so that log-likelihood, score and observed
 * Hessian stay finite for |x'b| up to at least 40. Adding a link means writing one
 * more `LinkDefinition` object; `makeLink` derives the rest.
 */
import { EngineInputError } from './errors'
import { normCdf, normLogCdf, normLogPdf, normLogSurv, normPdf, scaledLowerTail } from './normal'

export type LinkName = 'probit' | 'logit' | 'cloglog' | 'cauchit'

/** The primitives a link has to supply. */
export interface LinkDefinition {
  name: LinkName
  /** Display name, e.g. 'probit (normal)'. */
  label: string
  cdf: (t: number) => number
  pdf: (t: number) => number
  /** f'(t), derivative of the density. */
  dpdf: (t: number) => number
  logCdf: (t: number) => number
  logSurv: (t: number) => number
  logPdf: (t: number) => number
  /** d log f(t) / dt = f'(t)/f(t), closed form so that it stays finite where f underflows. */
  dLogPdf: (t: number) => number
  /** Optional closed form for f(t)/F(t); default exp(log f − log F). */
  pdfOverCdf?: (t: number) => number
  /** Optional closed form for f(t)/(1 − F(t)); default exp(log f − log(1 − F)). */
  pdfOverSurv?: (t: number) => number
  /** Optional fast per-observation terms (see `Link.obsTerms`). */
  obsTerms?: (t: number, y: number, out: Float64Array) => void
}

/** A complete link, as used by the estimator. */
export interface Link extends Required<Omit<LinkDefinition, 'obsTerms'>> {
  /**
   * Per-observation log-likelihood terms at index t = x'b for outcome y ∈ {0, 1}:
   * out[0] = ℓ = y log F(t) + (1 − y) log(1 − F(t)),
   * out[1] = dℓ/dt = y f/F − (1 − y) f/(1 − F),
   * out[2] = d²ℓ/dt² = y (f'/F − (f/F)²) − (1 − y) (f'/(1 − F) + (f/(1 − F))²).
   */
  obsTerms: (t: number, y: number, out: Float64Array) => void
  /** Quantile F⁻¹(p), by bisection; used only for starting values. */
  quantile: (p: number) => number
}

/** Completes a link definition with generic, tail-stable derived functions. */
export function makeLink(def: LinkDefinition): Link {
  const pdfOverCdf = def.pdfOverCdf ?? ((t: number) => Math.exp(def.logPdf(t) - def.logCdf(t)))
  const pdfOverSurv = def.pdfOverSurv ?? ((t: number) => Math.exp(def.logPdf(t) - def.logSurv(t)))
  const generic = (t: number, y: number, out: Float64Array): void => {
    const g = def.dLogPdf(t)
    if (y === 1) {
      const r = pdfOverCdf(t)
      out[0] = def.logCdf(t)
      out[1] = r
      out[2] = r * g - r * r
    }
    else {
      const r = pdfOverSurv(t)
      out[0] = def.logSurv(t)
      out[1] = -r
      out[2] = -r * g - r * r
    }
  }
  const quantile = (p: number): number => {
    let lo = -40
    let hi = 40
    for (let i = 0; i < 80; i++) {
      const mid = 0.5 * (lo + hi)
      if (def.cdf(mid) < p) lo = mid
      else hi = mid
    }
    return 0.5 * (lo + hi)
  }
  return {
    name: def.name,
    label: def.label,
    cdf: def.cdf,
    pdf: def.pdf,
    dpdf: def.dpdf,
    logCdf: def.logCdf,
    logSurv: def.logSurv,
    logPdf: def.logPdf,
    dLogPdf: def.dLogPdf,
    pdfOverCdf,
    pdfOverSurv,
    obsTerms: def.obsTerms ?? generic,
    quantile
  }
}

const INV_SQRT_2PI = 0.3989422804014327

/**
 * Probit: F = Φ. With q = 2y − 1 and s = q t, ℓ = log Φ(s), dℓ/dt = q λ(s),
 * d²ℓ/dt² = −λ(s) (λ(s) + s), where λ = φ/Φ is the inverse Mills ratio.
 */
export const probit: Link = makeLink({
  name: 'probit',
  label: 'probit (standard normal)',
  cdf: normCdf,
  pdf: normPdf,
  dpdf: t => -t * normPdf(t),
  logCdf: normLogCdf,
  logSurv: normLogSurv,
  logPdf: normLogPdf,
  dLogPdf: t => -t,
  obsTerms: (t, y, out) => {
    const q = y === 1 ? 1 : -1
    const s = q * t
    let lambda: number
    if (s < 0) {
      // Φ(s) = e^{−s²/2} R(−s): take the log of R only, so nothing underflows.
      const r = scaledLowerTail(-s)
      out[0] = -0.5 * s * s + Math.log(r)
      lambda = 1 / (2.5066282746310002 * r)
    }
    else {
      const e = Math.exp(-0.5 * s * s)
      const upper = e * scaledLowerTail(s) // 1 − Φ(s)
      out[0] = Math.log1p(-upper)
      lambda = INV_SQRT_2PI * e / (1 - upper)
    }
    out[1] = q * lambda
    out[2] = -lambda * (lambda + s)
  }
})

/** log(1 + e^u) without overflow. */
function softplus(u: number): number {
  return u > 0 ? u + Math.log1p(Math.exp(-u)) : Math.log1p(Math.exp(u))
}

function logisticCdf(t: number): number {
  return t >= 0 ? 1 / (1 + Math.exp(-t)) : Math.exp(t) / (1 + Math.exp(t))
}

/**
 * Logit: F(t) = 1/(1 + e^{−t}). ℓ = y t − log(1 + e^t), dℓ/dt = y − F, d²ℓ/dt² = −F(1 − F).
 */
export const logit: Link = makeLink({
  name: 'logit',
  label: 'logit (logistic)',
  cdf: logisticCdf,
  pdf: (t) => {
    const e = Math.exp(-Math.abs(t))
    return e / ((1 + e) * (1 + e))
  },
  dpdf: (t) => {
    const p = logisticCdf(t)
    return p * (1 - p) * (1 - 2 * p)
  },
  logCdf: t => -softplus(-t),
  logSurv: t => -softplus(t),
  logPdf: t => -Math.abs(t) - 2 * Math.log1p(Math.exp(-Math.abs(t))),
  dLogPdf: t => 1 - 2 * logisticCdf(t),
  pdfOverCdf: t => 1 - logisticCdf(t),
  pdfOverSurv: t => logisticCdf(t),
  obsTerms: (t, y, out) => {
    // One exponential per row: e = e^{−|t|} gives F and 1 − F without cancellation.
    const e = Math.exp(-Math.abs(t))
    const l1p = Math.log1p(e)
    const inv = 1 / (1 + e)
    const p = t >= 0 ? inv : e * inv
    const pc = t >= 0 ? e * inv : inv
    if (y === 1) {
      out[0] = t >= 0 ? -l1p : t - l1p
      out[1] = pc
    }
    else {
      out[0] = t >= 0 ? -t - l1p : -l1p
      out[1] = -p
    }
    out[2] = -p * pc
  }
})

/** log(1 − e^{−u}) for u > 0, accurate for small and large u. */
function log1mexp(u: number): number {
  return u < 0.6931471805599453 ? Math.log(-Math.expm1(-u)) : Math.log1p(-Math.exp(-u))
}

/**
 * Complementary log-log: F(t) = 1 − exp(−e^t). log(1 − F) = −e^t exactly;
 * log F = log(1 − exp(−e^t)); f = exp(t − e^t); f/(1 − F) = e^t.
 */
export const cloglog: Link = makeLink({
  name: 'cloglog',
  label: 'complementary log-log',
  cdf: t => -Math.expm1(-Math.exp(t)),
  pdf: t => Math.exp(t - Math.exp(t)),
  dpdf: (t) => {
    const u = Math.exp(t)
    return Math.exp(t - u) * (1 - u)
  },
  logCdf: t => log1mexp(Math.exp(t)),
  logSurv: t => -Math.exp(t),
  logPdf: t => t - Math.exp(t),
  dLogPdf: t => 1 - Math.exp(t),
  pdfOverCdf: (t) => {
    const u = Math.exp(t)
    return Math.exp(t - u - log1mexp(u))
  },
  pdfOverSurv: t => Math.exp(t),
  obsTerms: (t, y, out) => {
    const u = Math.exp(t)
    if (y === 1) {
      const logF = log1mexp(u)
      const r = Math.exp(t - u - logF)
      out[0] = logF
      out[1] = r
      out[2] = r * (1 - u) - r * r
    }
    else {
      // ℓ = −e^t, so both derivatives are −e^t as well; written directly to avoid
      // the cancellation in −(1 − e^t)e^t − e^{2t} at large t.
      out[0] = -u
      out[1] = -u
      out[2] = -u
    }
  }
})

const INV_PI = 0.3183098861837907

/** Cauchy cdf written with atan(1/|t|) in the tails so that small tail areas keep their digits. */
function cauchyCdf(t: number): number {
  if (t < -1) return Math.atan(-1 / t) * INV_PI
  if (t > 1) return 1 - Math.atan(1 / t) * INV_PI
  return 0.5 + Math.atan(t) * INV_PI
}

function cauchyLogCdf(t: number): number {
  if (t < -1) return Math.log(Math.atan(-1 / t) * INV_PI)
  if (t > 1) return Math.log1p(-Math.atan(1 / t) * INV_PI)
  return Math.log(0.5 + Math.atan(t) * INV_PI)
}

/** Cauchit: F(t) = 1/2 + atan(t)/π, f(t) = 1/(π(1 + t²)). Heavy tails; log-likelihood not concave. */
export const cauchit: Link = makeLink({
  name: 'cauchit',
  label: 'cauchit (Cauchy)',
  cdf: cauchyCdf,
  pdf: t => INV_PI / (1 + t * t),
  dpdf: t => -2 * t * INV_PI / ((1 + t * t) * (1 + t * t)),
  logCdf: cauchyLogCdf,
  logSurv: t => cauchyLogCdf(-t),
  logPdf: t => Math.log(INV_PI) - Math.log1p(t * t),
  dLogPdf: t => -2 * t / (1 + t * t)
})

export const LINKS: Readonly<Record<LinkName, Link>> = { probit, logit, cloglog, cauchit }

export function getLink(name: LinkName): Link {
  const link = LINKS[name]
  if (!link) throw new EngineInputError('invalid_spec', `unknown link '${String(name)}' (use probit, logit, cloglog or cauchit)`)
  return link
}
