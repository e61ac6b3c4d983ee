import type { H3Event } from 'h3'
import type { SettingsInput } from '#shared/utils/schemas/team'
import type { SettingsView } from '#shared/types/team'
import type { PrivacyView } from '#shared/types/privacy'
import type { PrivacySettings } from '#shared/utils/schemas/privacy'
import { Organisation, settingsOf } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'
import { privacyView } from './retention'

function viewOf(organisation: Organisation): SettingsView {
  const settings = settingsOf(organisation)
  return {
    name: organisation.name,
    defaultClusterVariable: settings.defaultClusterVariable,
    minVisitsForFunders: settings.minVisitsForFunders,
    funderOrganisations: settings.funderOrganisations
  }
}

export async function readSettings(organisationId: number): Promise<SettingsView> {
  const organisation = await Organisation.findByPk(organisationId)
  if (!organisation) throw createError({ statusCode: 404, message: 'Organisation not found.' })
  return viewOf(organisation)
}

/** Replaces the settings an admin edits, keeps any other keys of the settings JSON, and audits what changed. */
export async function updateSettings(event: H3Event, admin: SignedInUser, input: SettingsInput): Promise<SettingsView> {
  return database().transaction(async (transaction) => {
    const organisation = await Organisation.findByPk(admin.organisationId, { transaction, lock: transaction.LOCK.UPDATE })
    if (!organisation) throw createError({ statusCode: 404, message: 'Organisation not found.' })
    const before = viewOf(organisation)
    const { name, ...settings } = input
    const changed = (Object.keys(input) as Array<keyof SettingsInput>)
      .filter(key => JSON.stringify(before[key]) !== JSON.stringify(input[key]))
    if (changed.length) {
      await organisation.update({ name, settings: { ...settingsOf(organisation), ...settings } }, { transaction })
      await audit(event, admin, { action: 'settings.updated', entityType: 'organisation', entityId: organisation.id, details: { changed } }, transaction)
    }
    return viewOf(organisation)
  })
}

/** Replaces the organisation's personal data rules and audits the change (the values are rules, not personal data). */
export async function updatePrivacySettings(event: H3Event, admin: SignedInUser, input: PrivacySettings): Promise<PrivacyView> {
  await database().transaction(async (transaction) => {
    const organisation = await Organisation.findByPk(admin.organisationId, { transaction, lock: transaction.LOCK.UPDATE })
    if (!organisation) throw createError({ statusCode: 404, message: 'Organisation not found.' })
    const before = settingsOf(organisation).privacy
    if (JSON.stringify(before) === JSON.stringify(input)) return
    await organisation.update({ settings: { ...settingsOf(organisation), privacy: input } }, { transaction })
    await audit(event, admin, { action: 'privacy.settings', entityType: 'organisation', entityId: organisation.id, details: { before, after: input } }, transaction)
  })
  return privacyView(admin.organisationId)
}
