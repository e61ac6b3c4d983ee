import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AuditEntry, Organisation } from '../../server/db/models'
import { closeTestDatabase, testDatabase } from '../support/database'
import { type Client, DEMO, demoUser, freshClient } from '../support/server'
import { inviteThroughMail } from '../support/team'

let admin: Client

// The demo organisation's settings as seeded: put back afterwards, since later tests rely on its funder list.
let seeded: Organisation['settings']

beforeAll(async () => {
  testDatabase()
  admin = freshClient()
  await admin.signIn(demoUser('admin').email)
  seeded = (await Organisation.findOne({ where: { slug: DEMO.organisation.slug } }))!.settings
})
afterAll(async () => {
  await Organisation.update({ settings: seeded }, { where: { slug: DEMO.organisation.slug } })
  await closeTestDatabase()
})

const SETTINGS = {
  name: DEMO.organisation.name,
  defaultClusterVariable: 'village',
  minVisitsForFunders: 8,
  funderOrganisations: [
    { name: 'Lindqvist-Abara Rural Fund', emailDomain: 'lindqvist-abara.example' },
    { name: 'Ombara Valley Water Board', emailDomain: 'ovwb.example' }
  ]
}

describe('organisation settings', () => {
  it('saves name, cluster variable, small-village threshold and funder organisations, keeping other keys, and audits the change', async () => {
    const organisation = (await Organisation.findOne({ where: { slug: DEMO.organisation.slug } }))!
    await organisation.update({ settings: { ...organisation.settings, keptByAnotherFeature: true } as typeof organisation.settings })
    const saved = await admin.request('PUT', '/api/settings', { ...SETTINGS, funderOrganisations: SETTINGS.funderOrganisations.map(f => ({ ...f, emailDomain: f.emailDomain.toUpperCase() })) })
    expect(saved.status).toBe(200)
    expect(saved.body).toEqual(SETTINGS)
    expect((await admin.get('/api/settings')).body).toEqual(SETTINGS)
    await organisation.reload()
    expect(organisation.settings).toMatchObject({ keptByAnotherFeature: true, minVisitsForFunders: 8 })
    const entry = await AuditEntry.findOne({ where: { action: 'settings.updated' }, order: [['id', 'DESC']] })
    expect(entry!.details).toEqual({ changed: ['minVisitsForFunders', 'funderOrganisations'] })
  })

  it.each([
    ['no body', undefined],
    ['a missing name', { ...SETTINGS, name: '' }],
    ['a cluster variable with spaces', { ...SETTINGS, defaultClusterVariable: 'village id' }],
    ['a threshold of zero', { ...SETTINGS, minVisitsForFunders: 0 }],
    ['a threshold as text', { ...SETTINGS, minVisitsForFunders: 'five' }],
    ['a domain with @', { ...SETTINGS, funderOrganisations: [{ name: 'A', emailDomain: '@fund.example' }] }],
    ['a repeated domain', { ...SETTINGS, funderOrganisations: [{ name: 'A', emailDomain: 'fund.example' }, { name: 'B', emailDomain: 'fund.example' }] }]
  ])('answers 400 to %s and writes nothing', async (_label, body) => {
    const before = (await Organisation.findOne({ where: { slug: DEMO.organisation.slug } }))!.toJSON()
    const answer = await admin.request('PUT', '/api/settings', body)
    expect(answer.status).toBe(400)
    expect(answer.body.message.length).toBeGreaterThan(5)
    const after = (await Organisation.findOne({ where: { slug: DEMO.organisation.slug } }))!.toJSON()
    expect(after).toEqual(before)
  })
})

describe('the outbox page', () => {
  it('shows the messages this organisation sent, as the mail catcher kept them', async () => {
    const invited = await inviteThroughMail(admin, { role: 'enumerator' })
    const outbox = await admin.get<{ enabled: boolean, items: Array<{ to: string[], subject: string, text: string }> }>('/api/outbox')
    expect(outbox.status).toBe(200)
    expect(outbox.body.enabled).toBe(true)
    const mine = outbox.body.items.find(item => item.to.includes(invited.email))
    expect(mine?.subject).toBe(invited.mail.subject)
    expect(mine?.text).toContain('/welcome?token=')
  })
})
