/**
 * The new models' own warning codes: σ on the boundary 0 (checked against R's lme4::glmer from
 * Debian's r-cran-lme4, which reports the same fit as singular), quadrature that moves when the
 * points double, too few villages, and too few PSUs in a survey design.
 */
import { spawnSync } from 'node:child_process'
import { mkdtempSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { describe, expect, it } from 'vitest'
import { runModel } from '../../../shared/utils/stats/index'
import { normal, prng } from '../../../shared/utils/random/prng'

type Row = Record<string, string | number>
function villages(seed: number, G: number, per: number, sd: number): Row[] {
  const u = prng(seed)
  const rows: Row[] = []
  for (let g = 0; g < G; g++) {
    const re = sd * normal(u)
    for (let i = 0; i < per; i++) {
      const x = normal(u)
      rows.push({ y: -0.2 + 0.5 * x + re + normal(u) > 0 ? 1 : 0, x, village: `v${g}`, w: 1 + (g % 3), district: `d${g % 2}` })
    }
  }
  return rows
}
const ri = (rows: Row[], quadPoints = 12) => runModel(rows, { outcome: 'y', covariates: [{ name: 'x' }], cluster: 'village', villageTreatment: 'random-intercept', quadPoints })
const codes = (r: ReturnType<typeof runModel>) => r.warnings.map(w => w.code)

describe('warnings of the village random intercept', () => {
  it('σ on the boundary 0 when villages do not differ; glmer finds the same singular fit', () => {
    const rows = villages(1, 25, 10, 0)
    const res = ri(rows)
    expect(codes(res)).toContain('sigma_on_boundary')
    expect(codes(res)).not.toContain('not_converged')
    expect(res.warnings.find(w => w.code === 'sigma_on_boundary')!.message).toMatch(/on the boundary 0/)
    const dir = mkdtempSync(join(tmpdir(), 'fc-warn-'))
    writeFileSync(join(dir, 'd.csv'), ['y,x,village', ...rows.map(r => `${r.y},${r.x},${r.village}`)].join('\n'))
    const r = spawnSync('Rscript', ['-e', `suppressPackageStartupMessages(library(lme4)); d <- read.csv("${join(dir, 'd.csv')}"); m <- glmer(y ~ x + (1 | village), data = d, family = binomial(link = "probit"), nAGQ = 12); cat(getME(m, "theta"))`], { encoding: 'utf8' })
    expect(r.status, r.stderr).toBe(0)
    expect(Number(r.stdout.trim())).toBeLessThan(1e-3)
  }, 60_000)

  it('unstable quadrature with too few points for large, different villages', () => {
    const res = ri(villages(5, 25, 60, 2.5), 2)
    expect(codes(res)).toContain('quadrature_unstable')
    expect(res.warnings.find(w => w.code === 'quadrature_unstable')!.message).toMatch(/doubling the quadrature points to 4/)
    expect(codes(ri(villages(5, 25, 60, 2.5), 16))).not.toContain('quadrature_unstable')
  })

  it('too few villages, with their number', () => {
    const res = ri(villages(2, 12, 15, 0.8))
    expect(res.warnings.find(w => w.code === 'few_villages')!.message).toMatch(/only 12 villages/)
  })
})

describe('warnings of the survey design', () => {
  it('too few PSUs, with their number', () => {
    const res = runModel(villages(3, 12, 15, 0.5), { outcome: 'y', covariates: [{ name: 'x' }], cluster: 'village', weights: 'w', strata: 'district', villageTreatment: 'survey' })
    expect(res.warnings.find(w => w.code === 'few_psus')!.message).toMatch(/only 12 sampled villages .* in 2 strata, so 10 design degrees of freedom/)
  })
})
