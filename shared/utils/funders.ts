// Which funder organisation, from the organisation's settings, a funder account belongs to. A funder sees
// published rounds only when this finds one: the e-mail's domain must equal a listed domain exactly.
export interface FunderOrganisationEntry {
  name: string
  emailDomain: string
}

export function funderOrganisationOf<T extends FunderOrganisationEntry>(email: string, funders: readonly T[]): T | null {
  const at = email.lastIndexOf('@')
  if (at < 1) return null
  const domain = email.slice(at + 1).trim().toLowerCase()
  return funders.find(funder => funder.emailDomain.toLowerCase() === domain) ?? null
}
