/** Normal/logistic functions against @stdlib and printed tables; all four links in the tails. */
import normalCdf from '@stdlib/stats-base-dists-normal-cdf'
import normalLogCdf from '@stdlib/stats-base-dists-normal-logcdf'
import normalPdf from '@stdlib/stats-base-dists-normal-pdf'
import logisticCdf from '@stdlib/stats-base-dists-logistic-cdf'
import jStat from 'jstat'
import { describe, expect, it } from 'vitest'
import { chiSquareSf, LINKS, normCdf, normLogCdf, normMillsRatio, normPdf } from '../../../shared/utils/stats/index'
import { relErr } from './helpers'

const grid: number[] = []
for (let t = -40; t <= 40; t += 0.01) grid.push(Math.round(t * 100) / 100)

describe('standard normal against @stdlib', () => {
  it('pdf and cdf on −40..40 (relative 5e-13 where the value is above 1e-300)', () => {
    let worst = 0
    for (const t of grid) {
      const ref = normalCdf(t, 0, 1)
      if (ref > 1e-300) worst = Math.max(worst, relErr(normCdf(t), ref))
      expect(relErr(normPdf(t), normalPdf(t, 0, 1) || 1e-300) < 1e-13 || normalPdf(t, 0, 1) === 0).toBe(true)
    }
    expect(worst).toBeLessThan(5e-13)
  })

  it('log-cdf on −40..40 in relative terms, finite everywhere', () => {
    let worst = 0
    for (const t of grid) {
      const ours = normLogCdf(t)
      expect(Number.isFinite(ours)).toBe(true)
      const ref = normalLogCdf(t, 0, 1)
      if (ref !== 0) worst = Math.max(worst, relErr(ours, ref))
    }
    expect(worst).toBeLessThan(1e-12)
  })

  it('printed table values', () => {
    // Abramowitz & Stegun, Table 26.1: Φ(1.96) = 0.9750021.
    expect(normCdf(1.96)).toBeCloseTo(0.9750021, 7)
    // Recalled from memory (standard table values): Φ(1) = 0.8413447, Φ(2.5758) ≈ 0.995, Φ(0) = 0.5.
    expect(normCdf(1)).toBeCloseTo(0.8413447, 7)
    expect(normCdf(2.5758)).toBeCloseTo(0.995, 5)
    expect(normCdf(0)).toBe(0.5)
  })

  it('inverse Mills ratio φ/Φ is finite at −40 and close to −t there', () => {
    const r = normMillsRatio(-40)
    expect(Number.isFinite(r)).toBe(true)
    // Asymptotically φ(t)/Φ(t) ≈ −t − 1/t for t → −∞ (independent series expansion).
    expect(relErr(r, 40 + 1 / 40)).toBeLessThan(1e-4)
  })
})

describe('logistic cdf against @stdlib', () => {
  it('matches on −40..40', () => {
    let worst = 0
    for (const t of grid) worst = Math.max(worst, relErr(LINKS.logit.cdf(t), logisticCdf(t, 0, 1)))
    expect(worst).toBeLessThan(1e-13)
  })
})

describe('all four links', () => {
  for (const link of Object.values(LINKS)) {
    it(`${link.name}: log F, log(1 − F), f/F, f/(1 − F) finite at ±40; obsTerms finite`, () => {
      const out = new Float64Array(3)
      for (const t of [-40, -20, -5, 0, 5, 20, 40]) {
        for (const v of [link.logCdf(t), link.logSurv(t), link.pdfOverCdf(t), link.pdfOverSurv(t)]) {
          expect(Number.isFinite(v), `${link.name} at ${t}`).toBe(true)
        }
        for (const y of [0, 1]) {
          link.obsTerms(t, y, out)
          expect(out.every(Number.isFinite), `${link.name} obsTerms at ${t}, y=${y}`).toBe(true)
        }
      }
    })

    it(`${link.name}: pdf = d cdf/dt, dpdf = d pdf/dt, logs consistent (finite differences)`, () => {
      const h = 1e-5
      for (const t of [-3, -1.2, -0.3, 0.4, 1.7, 2.9]) {
        // Differentiate the smaller tail so the difference quotient keeps its digits.
        const tail = link.cdf(t) < 0.5 ? link.cdf : (s: number) => -Math.exp(link.logSurv(s))
        expect(relErr(link.pdf(t), (tail(t + h) - tail(t - h)) / (2 * h))).toBeLessThan(1e-6)
        expect(Math.abs(link.dpdf(t) - (link.pdf(t + h) - link.pdf(t - h)) / (2 * h))).toBeLessThan(1e-7)
        expect(relErr(Math.exp(link.logCdf(t)), link.cdf(t))).toBeLessThan(1e-13)
        if (link.cdf(t) < 0.99) expect(relErr(Math.exp(link.logSurv(t)), 1 - link.cdf(t))).toBeLessThan(1e-12)
      }
    })

    it(`${link.name}: obsTerms derivatives agree with finite differences of log F and log(1 − F)`, () => {
      const out = new Float64Array(3)
      const h = 1e-5
      for (const t of [-2.5, -0.7, 0.2, 1.9]) {
        for (const y of [0, 1]) {
          const l = (s: number): number => (y === 1 ? link.logCdf(s) : link.logSurv(s))
          link.obsTerms(t, y, out)
          expect(relErr(out[0]!, l(t))).toBeLessThan(1e-12)
          expect(Math.abs(out[1]! - (l(t + h) - l(t - h)) / (2 * h))).toBeLessThan(1e-7)
          expect(Math.abs(out[2]! - (l(t + h) - 2 * l(t) + l(t - h)) / (h * h))).toBeLessThan(1e-3)
        }
      }
    })
  }
})

describe('chi-square upper tail against jStat', () => {
  it('matches where jStat is accurate (p > 1e-10)', () => {
    for (const df of [1, 2, 5, 8, 17]) {
      for (const x of [0.5, 2, 7.3, 15, 30]) {
        const ref = 1 - jStat.chisquare.cdf(x, df)
        if (ref > 1e-10) expect(relErr(chiSquareSf(x, df), ref), `df ${df} x ${x}`).toBeLessThan(1e-8)
      }
    }
  })
})
