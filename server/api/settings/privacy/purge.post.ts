// Purges now what the retention periods make due (the scheduled check does the same on its own).
export default defineRoleHandler(['admin'], async (event, admin) => {
  const report = await purgeOrganisation(admin.organisationId, new Date(), admin, clientIp(event))
  return { report, view: await privacyView(admin.organisationId) }
})
