import { describe, expect, it } from 'vitest'
import { funderOrganisationOf } from '../../shared/utils/funders'

const FUNDERS = [
  { name: 'Sandveld Harvest Foundation', emailDomain: 'sandveld.example' },
  { name: 'Ombara Valley Water Board', emailDomain: 'ovwb.example' }
]

describe('funder organisations', () => {
  it.each([
    ['halvard@sandveld.example', 'Sandveld Harvest Foundation'],
    ['Someone@OVWB.example', 'Ombara Valley Water Board'],
    ['a@b@ovwb.example', 'Ombara Valley Water Board']
  ])('%s belongs to %s', (email, name) => {
    expect(funderOrganisationOf(email, FUNDERS)?.name).toBe(name)
  })

  it.each([
    'halvard@sub.sandveld.example',
    'halvard@sandveld.example.evil',
    'halvard@notsandveld.example',
    'sandveld.example',
    '@sandveld.example'
  ])('%s belongs to none', (email) => {
    expect(funderOrganisationOf(email, FUNDERS)).toBeNull()
  })

  it('an empty list lets no funder in', () => {
    expect(funderOrganisationOf('halvard@sandveld.example', [])).toBeNull()
  })
})
