// The organisation's personal data rules, what the retention purge will remove next and when, and its last report.
export default defineRoleHandler(['admin'], (_event, admin) => privacyView(admin.organisationId))
