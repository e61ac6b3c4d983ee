// The organisation's enumerator tablets with an encrypted store, for the people page.
export default defineRoleHandler(['admin'], async (_event, admin) => ({ devices: await devicesOf(admin.organisationId) }))
