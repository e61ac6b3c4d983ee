/** Design builder, predictions, scenarios, LR test, ROC/AUC and Hosmer–Lemeshow, each against an independent computation. */
import { describe, expect, it } from 'vitest'
import {
  buildDesign, chiSquareSf, computeCovariance, fitBinary, hosmerLemeshow, lrTest, marginalEffects, predictProbabilities,
  predictedHistogram, predictNew, probit, quadForm, rocCurve, runModel, scenario, villageMeans, type ModelSpec
} from '../../../shared/utils/stats/index'
import { relErr } from './helpers'

// Invented scenario: farms in the (made-up) Kelembe district, eight villages.
function farms(n: number): Array<Record<string, unknown>> {
  let s = 12345
  const u = (): number => {
    s = (s * 48271) % 2147483647
    return s / 2147483647
  }
  return Array.from({ length: n }, (_, i) => {
    const distance = 0.5 + 10 * u()
    const soil = ['loam', 'clay', 'sand'][i % 3]!
    const member = u() < 0.4 ? 'yes' : 'no'
    const eta = 0.6 - 0.15 * distance + (soil === 'clay' ? 0.4 : soil === 'sand' ? -0.3 : 0) + (member === 'yes' ? 0.5 : 0)
    return { adopted: eta + (u() + u() + u() - 1.5) * 2 > 0 ? 1 : 0, distance, soil, member, village: `village ${1 + (i % 8)}` }
  })
}
const data = farms(1500)
const spec: ModelSpec = {
  outcome: 'adopted',
  covariates: [
    { name: 'distance', label: 'distance to agro-dealer (km)', transform: 'log', square: true },
    { name: 'soil', label: 'soil type', type: 'categorical', reference: 'loam' },
    { name: 'member', label: 'farmer group member', type: 'yesno' }
  ],
  interactions: [['distance', 'member']],
  cluster: 'village'
}

describe('design builder', () => {
  const d = buildDesign(data, spec)
  it('names terms readably and codes dummies against the chosen reference', () => {
    expect(d.plan.terms.map(t => t.label)).toEqual([
      'intercept', 'log distance to agro-dealer (km)', 'log distance to agro-dealer (km), squared',
      'soil type: clay vs loam', 'soil type: sand vs loam', 'farmer group member: yes vs no',
      'log distance to agro-dealer (km) × farmer group member'
    ])
    for (let i = 0; i < 30; i++) {
      const r = data[d.rowIndex[i]!]!
      const row = d.X.subarray(i * d.k, (i + 1) * d.k)
      const lx = Math.log(r.distance as number)
      const m = r.member === 'yes' ? 1 : 0
      expect(Array.from(row)).toEqual([1, lx, lx * lx, r.soil === 'clay' ? 1 : 0, r.soil === 'sand' ? 1 : 0, m, lx * m])
    }
  })

  it('centring subtracts the sample mean', () => {
    const dc = buildDesign(data, { outcome: 'adopted', covariates: [{ name: 'distance', transform: 'centre' }] })
    const mean = data.reduce((a, r) => a + (r.distance as number), 0) / data.length
    expect(dc.plan.covariates[0]!.centre).toBeCloseTo(mean, 12)
    let s = 0
    for (let i = 0; i < dc.n; i++) s += dc.X[i * dc.k + 1]!
    expect(Math.abs(s / dc.n)).toBeLessThan(1e-12)
  })
})

describe('margins with chain rule', () => {
  it('AME of a log + square + interaction covariate equals a numerical derivative of mean p̂', () => {
    const d = buildDesign(data, spec)
    const fit = fitBinary(d, 'probit')
    const cov = computeCovariance(d, fit, 'conventional')
    const ame = marginalEffects(d, fit, cov).effects.find(e => e.covariate === 'distance')!
    const h = 1e-5
    const meanP = (delta: number): number => {
      const shifted = data.map(r => ({ ...r, distance: (r.distance as number) + delta }))
      const ds = buildDesign(shifted, spec)
      const p = predictProbabilities(ds, fit)
      return p.reduce((a, b) => a + b, 0) / p.length
    }
    expect(relErr(ame.estimate, (meanP(h) - meanP(-h)) / (2 * h))).toBeLessThan(1e-6)
  })
})

describe('village means and scenarios', () => {
  const d = buildDesign(data, spec)
  const fit = fitBinary(d, 'probit')
  const cov = computeCovariance(d, fit, 'cluster')

  it('village mean p̂ equals the direct average, SE matches a numeric-gradient delta method', () => {
    const v = villageMeans(d, fit, cov)
    expect(v).toHaveLength(8)
    const g0 = v[0]!
    const rowsIn = Array.from({ length: d.n }, (_, i) => i).filter(i => d.cluster![i] === 0)
    const mean = (b: Float64Array): number => rowsIn.reduce((a, i) => {
      let eta = 0
      for (let j = 0; j < d.k; j++) eta += d.X[i * d.k + j]! * b[j]!
      return a + probit.cdf(eta)
    }, 0) / rowsIn.length
    expect(relErr(g0.estimate, mean(fit.coef))).toBeLessThan(1e-12)
    const grad = new Float64Array(d.k)
    for (let j = 0; j < d.k; j++) {
      const up = Float64Array.from(fit.coef)
      const dn = Float64Array.from(fit.coef)
      up[j]! += 1e-6
      dn[j]! -= 1e-6
      grad[j] = (mean(up) - mean(dn)) / 2e-6
    }
    expect(relErr(g0.se!, Math.sqrt(quadForm(cov.V!, grad, d.k)))).toBeLessThan(1e-5)
  })

  it('scenario: delta-method SE agrees with a numeric derivative; subset only changes chosen villages', () => {
    const sc = scenario(d, fit, cov, { name: 'closer dealers', covariate: 'distance', shift: -0.4, villages: ['village 2', 'village 5'] })
    expect(sc.villages.filter(v => v.estimate !== 0).map(v => v.village)).toEqual(['village 2', 'village 5'])
    const change = (b: Float64Array): number => {
      const f2 = { ...fit, coef: b }
      return scenario(d, f2, { ...cov, V: null }, { name: 's', covariate: 'distance', shift: -0.4, villages: ['village 2', 'village 5'] }).overall.estimate
    }
    const grad = new Float64Array(d.k)
    for (let j = 0; j < d.k; j++) {
      const up = Float64Array.from(fit.coef)
      const dn = Float64Array.from(fit.coef)
      up[j]! += 1e-6
      dn[j]! -= 1e-6
      grad[j] = (change(up) - change(dn)) / 2e-6
    }
    expect(relErr(sc.overall.se!, Math.sqrt(quadForm(cov.V!, grad, d.k)))).toBeLessThan(1e-5)
    expect(sc.overall.estimate).toBeGreaterThan(0)
  })
})

describe('LR test, ROC/AUC, Hosmer–Lemeshow', () => {
  const full = buildDesign(data, spec)
  const fFull = fitBinary(full, 'probit')
  const small = buildDesign(data, { ...spec, covariates: spec.covariates.slice(0, 1).map(c => ({ ...c })), interactions: [] })
  const fSmall = fitBinary(small, 'probit')

  it('LR test between nested fits: statistic, df and p', () => {
    const t = lrTest({ design: small, fit: fSmall }, { design: full, fit: fFull })
    expect(t.df).toBe(4)
    expect(t.statistic).toBeCloseTo(2 * (fFull.loglik - fSmall.loglik), 10)
    expect(t.p).toBeCloseTo(chiSquareSf(t.statistic, 4), 14)
    expect(() => lrTest({ design: full, fit: fFull }, { design: small, fit: fSmall })).toThrow(/terms the full model lacks/)
  })

  it('AUC equals a brute-force pairwise count (ties count one half)', () => {
    const p = predictProbabilities(full, fFull).map(v => Math.round(v * 50) / 50)
    const y = full.y
    let wins = 0
    let pairs = 0
    for (let i = 0; i < p.length; i++) {
      if (y[i] !== 1) continue
      for (let j = 0; j < p.length; j++) {
        if (y[j] !== 0) continue
        pairs++
        wins += p[i]! > p[j]! ? 1 : p[i] === p[j] ? 0.5 : 0
      }
    }
    expect(rocCurve(p, y, null).auc).toBeCloseTo(wins / pairs, 12)
  })

  it('Hosmer–Lemeshow statistic recomputed from its own decile table', () => {
    const p = predictProbabilities(full, fFull)
    const hl = hosmerLemeshow(p, full.y, null, 10)
    expect(hl.df).toBe(8)
    expect(hl.groups.reduce((a, g) => a + g.n, 0)).toBe(full.n)
    const stat = hl.groups.reduce((a, g) => a + (g.observed - g.expected) ** 2 / (g.expected * (1 - g.expected / g.n)), 0)
    expect(hl.statistic).toBeCloseTo(stat, 10)
    // Observed counts are independent sums of outcomes over rows sorted by p̂.
    const order = Array.from(p.keys()).sort((a, b) => p[a]! - p[b]! || a - b)
    const first = order.slice(0, hl.groups[0]!.n).reduce((a, i) => a + full.y[i]!, 0)
    expect(hl.groups[0]!.observed).toBe(first)
  })
})

describe('predicted-probability histogram', () => {
  it('puts every row in exactly one bin, split by outcome', () => {
    const p = Float64Array.from([0, 0.049, 0.05, 0.5, 0.999, 1])
    const y = Float64Array.from([0, 1, 0, 1, 1, 0])
    const h = predictedHistogram(p, y)
    expect(h.edges).toHaveLength(21)
    expect(h.adopters.reduce((a, b) => a + b, 0)).toBe(3)
    expect(h.nonAdopters.reduce((a, b) => a + b, 0)).toBe(3)
    expect(h.nonAdopters[0]).toBe(1)
    expect(h.adopters[0]).toBe(1)
    expect(h.nonAdopters[1]).toBe(1)
    expect(h.adopters[10]).toBe(1)
    expect(h.adopters[19]).toBe(1)
    expect(h.nonAdopters[19]).toBe(1)
  })
})

describe('both kinds of marginal effects in one run', () => {
  it('gives as otherMargins exactly what a separate run at the means gives', () => {
    const data = farms(400)
    const base: ModelSpec = {
      outcome: 'adopted',
      covariates: [{ name: 'distance' }, { name: 'soil', type: 'categorical', reference: 'loam' }, { name: 'member', type: 'yesno' }]
    }
    const both = runModel(data, { ...base, margins: 'ame', bothMargins: true })
    const atMeans = runModel(data, { ...base, margins: 'mem' })
    expect(both.margins?.kind).toBe('ame')
    expect(both.otherMargins?.kind).toBe('mem')
    expect(both.otherMargins?.effects).toEqual(atMeans.margins?.effects)
    expect(runModel(data, base).otherMargins).toBeNull()
  })
})

describe('predicting new farms from a stored run', () => {
  it('reproduces the fit from the results plan and coefficients alone: logit p̂ sums to the adopters (score equation)', () => {
    const data = farms(300)
    const results = JSON.parse(JSON.stringify(runModel(data, {
      outcome: 'adopted',
      link: 'logit',
      covariates: [{ name: 'distance', transform: 'centre' }, { name: 'soil', type: 'categorical', reference: 'clay' }, { name: 'member', type: 'yesno' }]
    })))
    const p = predictNew(results.plan, results.coefficients.map((c: { estimate: number }) => c.estimate), 'logit', data)
    const adopters = data.reduce((s, r) => s + Number(r.adopted), 0)
    expect(p.reduce((s: number, v) => s + (v ?? 0), 0)).toBeCloseTo(adopters, 6)
  })
})

describe('overall predicted adoption', () => {
  it('is the size-weighted mean of the village means, and its SE matches a numeric-gradient delta method', () => {
    const data = farms(400)
    const spec: ModelSpec = { outcome: 'adopted', cluster: 'village', covariates: [{ name: 'distance' }, { name: 'member', type: 'yesno' }] }
    const r = runModel(data, spec)
    const villages = r.villages!
    const n = villages.reduce((s, v) => s + v.n, 0)
    expect(r.overall.estimate).toBeCloseTo(villages.reduce((s, v) => s + v.n * v.estimate, 0) / n, 12)
    expect(r.overall.observedRate).toBeCloseTo(villages.reduce((s, v) => s + v.n * v.observedRate, 0) / n, 12)
    // Independent: numeric gradient of the mean p̂ with respect to b, then g'Vg.
    const design = buildDesign(data, spec)
    const fit = fitBinary(design, 'probit')
    const cov = computeCovariance(design, fit, 'cluster')
    const meanAt = (b: Float64Array) => {
      let s = 0
      for (let i = 0; i < design.n; i++) {
        let eta = 0
        for (let j = 0; j < design.k; j++) eta += design.X[i * design.k + j]! * b[j]!
        s += probit.cdf(eta)
      }
      return s / design.n
    }
    const g = Array.from({ length: design.k }, (_, j) => {
      const h = 1e-6
      const up = Float64Array.from(fit.coef)
      const down = Float64Array.from(fit.coef)
      up[j]! += h
      down[j]! -= h
      return (meanAt(up) - meanAt(down)) / (2 * h)
    })
    expect(relErr(r.overall.se!, Math.sqrt(quadForm(cov.V!, Float64Array.from(g), design.k)))).toBeLessThan(1e-6)
  })
})
