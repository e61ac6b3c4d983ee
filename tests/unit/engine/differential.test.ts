/**
 * Differential test: many generated designs fitted by the engine and by statsmodels
 * (one /usr/bin/python3 subprocess for all of them, data passed as JSON files).
 * Varies N, k, link, weights, clusters, categorical terms and rare outcomes (~5%).
 * Fails (does not skip) when statsmodels is missing.
 */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath } from 'node:url'
import { beforeAll, describe, expect, it } from 'vitest'
import {
  buildDesign, computeCovariance, fitBinary, fitStatistics, marginalEffects, type CovariateSpec, type Design, type FitResult, type LinkName
} from '../../../shared/utils/stats/index'
import { relErr } from './helpers'
import { normal, prng } from '../../../shared/utils/random/prng'

const PY = '/usr/bin/python3'
const script = fileURLToPath(new URL('../../reference/statsmodels_diff.py', import.meta.url))

interface Case { id: string, link: LinkName, design: Design, fit: FitResult, weighted: boolean, clustered: boolean, categorical: boolean }

function makeCase(seed: number): Case {
  const u = prng(seed)
  const n = [300, 800, 2000, 5000][seed % 4]!
  const kNum = 1 + (seed % 5)
  const link: LinkName = seed % 2 ? 'logit' : 'probit'
  const weighted = seed % 3 === 1
  const clustered = seed % 3 !== 2
  const categorical = seed % 4 === 3
  const rare = seed % 5 === 4
  const G = 15 + (seed % 20)
  const rows: Array<Record<string, unknown>> = []
  for (let i = 0; i < n; i++) {
    const r: Record<string, unknown> = {}
    let eta = rare ? -1.9 : 0.1
    for (let j = 0; j < kNum; j++) {
      const v = j % 2 ? Math.exp(0.5 * normal(u)) : normal(u)
      r[`x${j}`] = v
      eta += (0.4 - 0.15 * j) * v
    }
    if (categorical) {
      const lv = ['loam', 'clay', 'sand'][Math.floor(u() * 3)]!
      r.soil = lv
      eta += lv === 'clay' ? 0.5 : lv === 'sand' ? -0.3 : 0
    }
    const g = Math.floor(u() * G)
    r.village = `v${g}`
    r.w = 0.5 + 2 * u()
    r.y = eta + (rare ? 0.5 : 0.8) * normal(u) > 0 ? 1 : 0
    rows.push(r)
  }
  const covariates: CovariateSpec[] = Array.from({ length: kNum }, (_, j) => ({ name: `x${j}` }))
  if (categorical) covariates.push({ name: 'soil', type: 'categorical', reference: 'loam' })
  const design = buildDesign(rows, {
    outcome: 'y', covariates, link, weights: weighted ? 'w' : undefined, cluster: clustered ? 'village' : undefined
  })
  return { id: `case${seed}`, link, design, fit: fitBinary(design, link), weighted, clustered, categorical }
}

const cases = Array.from({ length: 24 }, (_, s) => makeCase(s))
let ref: Array<Record<string, number[] | number | string>> = []
const worst: Record<string, number> = {}
const track = (name: string, e: number): void => {
  worst[name] = Math.max(worst[name] ?? 0, e)
}

beforeAll(() => {
  const probe = spawnSync(PY, ['-c', 'import statsmodels'], { encoding: 'utf8' })
  if (probe.status !== 0) {
    throw new Error(`the differential test needs statsmodels for ${PY} (Debian package python3-statsmodels): ${probe.stderr || probe.error}`)
  }
  const dir = mkdtempSync(join(tmpdir(), 'fc-diff-'))
  const input = cases.map(c => ({
    id: c.id, link: c.link, n: c.design.n, k: c.design.k, X: Array.from(c.design.X), y: Array.from(c.design.y),
    w: c.weighted ? Array.from(c.design.w!) : null, groups: c.clustered ? Array.from(c.design.cluster!) : null
  }))
  writeFileSync(join(dir, 'in.json'), JSON.stringify(input))
  const r = spawnSync(PY, [script, join(dir, 'in.json'), join(dir, 'out.json')], { encoding: 'utf8', maxBuffer: 1 << 26 })
  if (r.status !== 0) throw new Error(`statsmodels reference script failed: ${r.stderr}`)
  ref = JSON.parse(readFileSync(join(dir, 'out.json'), 'utf8'))
}, 120_000)

describe('engine vs statsmodels on generated designs', () => {
  for (const [idx, c] of cases.entries()) {
    it(`${c.id}: n=${c.design.n} k=${c.design.k} ${c.link}${c.weighted ? ' weighted' : ''}${c.clustered ? ' clustered' : ''}${c.categorical ? ' categorical' : ''}`, () => {
      const r = ref[idx]!
      const k = c.design.k
      expect(c.fit.converged).toBe(true)
      const params = r.params as number[]
      for (let j = 0; j < k; j++) {
        const e = relErr(c.fit.coef[j]!, params[j]!, 1e-3)
        track('coef', e)
        expect(e).toBeLessThan(1e-6)
      }
      const kinds: Array<['conventional' | 'hc0' | 'cluster', string]> = [['conventional', 'se'], ['hc0', 'hc0']]
      if (c.clustered) kinds.push(['cluster', 'cluster'])
      for (const [type, key] of kinds) {
        const V = computeCovariance(c.design, c.fit, type).V!
        for (let j = 0; j < k; j++) {
          const e = relErr(Math.sqrt(V[j * k + j]!), (r[key] as number[])[j]!)
          track(`se_${type}`, e)
          expect(e, `${type} ${j}`).toBeLessThan(1e-5)
        }
      }
      const s = fitStatistics(c.design, c.fit)
      track('loglik', relErr(s.loglik, r.llf as number))
      expect(relErr(s.loglik, r.llf as number)).toBeLessThan(1e-9)
      // statsmodels' Probit/Logit llnull comes from an iterative fit (accurate to ~5e-8).
      expect(relErr(s.loglikNull, r.llnull as number)).toBeLessThan(1e-6)
      if (!c.weighted && !c.categorical) {
        const m = marginalEffects(c.design, c.fit, computeCovariance(c.design, c.fit, 'conventional'))
        m.effects.forEach((e, j) => {
          const er = Math.max(relErr(e.estimate, (r.ame as number[])[j]!, 1e-4), relErr(e.se!, (r.ame_se as number[])[j]!))
          track('ame', er)
          expect(er).toBeLessThan(1e-5)
        })
      }
    })
  }
  it('summary of deviations', () => {
    console.info(`differential max relative deviations: ${JSON.stringify(worst)}`)
    expect(Object.keys(worst).length).toBeGreaterThan(3)
  })
})
