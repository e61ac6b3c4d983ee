import { describe, expect, it } from 'vitest'
import { ROLES, canOpen, navFor } from '../../shared/utils/roles'

describe('client navigation mirrors the roles', () => {
  it.each([
    ['/', 'funder', true],
    ['/people', 'admin', true],
    ['/people', 'coordinator', false],
    ['/people/12', 'admin', true],
    ['/audit', 'enumerator', false],
    ['/peoplex', 'admin', false],
    ['/not-listed', 'admin', false],
    ['/signin', undefined, true],
    ['/welcome', undefined, true],
    ['/reset', undefined, true],
    ['/forgot', undefined, true],
    ['/settings', 'admin', true],
    ['/settings', 'coordinator', false],
    ['/outbox', 'admin', true],
    ['/outbox', 'funder', false],
    ['/account', 'enumerator', true],
    ['/account', undefined, false],
    ['/', undefined, false],
    ['/field', 'enumerator', true],
    ['/field/visit', 'enumerator', true],
    ['/field', 'coordinator', false],
    ['/rounds', 'coordinator', true],
    ['/rounds/3', 'coordinator', true],
    ['/rounds', 'enumerator', false],
    ['/review', 'coordinator', true],
    ['/review', 'funder', false],
    ['/models', 'coordinator', true],
    ['/models/12', 'coordinator', true],
    ['/models', 'funder', false],
    ['/overview', 'funder', true],
    ['/overview', 'enumerator', false]
  ] as const)('%s for %s → %s', (path, role, expected) => {
    expect(canOpen(path, role)).toBe(expected)
  })

  it('gives every role a home and only admins the people pages', () => {
    for (const role of ROLES) expect(navFor(role).map(n => n.to)).toContain('/')
    expect(navFor('admin').map(n => n.to)).toEqual(['/', '/people', '/audit', '/settings', '/outbox'])
    expect(navFor('funder').map(n => n.to)).toEqual(['/', '/overview'])
    expect(navFor('enumerator').map(n => n.to)).toEqual(['/', '/field'])
    expect(navFor('coordinator').map(n => n.to)).toEqual(['/', '/rounds', '/review', '/models', '/overview', '/privacy'])
  })

  it('puts the own-password page in every role\'s user menu, not in the main bar', () => {
    for (const role of ROLES) {
      expect(navFor(role, 'user-menu').map(n => n.to)).toEqual(['/account'])
      expect(navFor(role).map(n => n.to)).not.toContain('/account')
    }
  })
})
