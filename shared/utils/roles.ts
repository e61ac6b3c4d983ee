// The four roles of Furrowcast. Server routes check these; client navigation mirrors them.
export const ROLES = ['admin', 'coordinator', 'enumerator', 'funder'] as const
export type Role = typeof ROLES[number]

export const ROLE_LABELS: Record<Role, string> = {
  admin: 'Administrator',
  coordinator: 'Coordinator',
  enumerator: 'Enumerator',
  funder: 'Funder'
}

export interface NavItem {
  to: string
  label: string
  roles: readonly Role[]
  /** Where the link is shown: the main bar (default) or the signed-in user's menu. */
  place?: 'main' | 'user-menu'
}

// One list drives both the navigation bar and the client route guard, so they cannot disagree.
export const NAV_ITEMS: readonly NavItem[] = [
  { to: '/', label: 'Home', roles: ROLES },
  { to: '/field', label: 'Field work', roles: ['enumerator'] },
  { to: '/rounds', label: 'Rounds', roles: ['coordinator'] },
  { to: '/review', label: 'Review', roles: ['coordinator'] },
  { to: '/models', label: 'Models', roles: ['coordinator'] },
  { to: '/overview', label: 'Adoption map', roles: ['coordinator', 'funder'] },
  { to: '/privacy', label: 'Farmers\' data', roles: ['coordinator'] },
  { to: '/people', label: 'People', roles: ['admin'] },
  { to: '/audit', label: 'Audit log', roles: ['admin'] },
  { to: '/settings', label: 'Settings', roles: ['admin'] },
  { to: '/outbox', label: 'Outbox', roles: ['admin'] },
  { to: '/account', label: 'Account', roles: ROLES, place: 'user-menu' }
]

/** Pages that anyone may open without signing in: sign-in, and the pages behind the links that mail carries. */
export const PUBLIC_PATHS: readonly string[] = ['/signin', '/welcome', '/reset', '/forgot']

export function canOpen(path: string, role: Role | undefined): boolean {
  if (PUBLIC_PATHS.includes(path)) return true
  if (!role) return false
  const item = [...NAV_ITEMS]
    .sort((a, b) => b.to.length - a.to.length)
    .find(nav => nav.to === '/' ? path === '/' : path === nav.to || path.startsWith(`${nav.to}/`))
  // Deny by default: a page not listed is reachable by no role until it is listed.
  return item ? item.roles.includes(role) : false
}

export function navFor(role: Role, place: 'main' | 'user-menu' = 'main'): NavItem[] {
  return NAV_ITEMS.filter(item => item.roles.includes(role) && (item.place ?? 'main') === place)
}
