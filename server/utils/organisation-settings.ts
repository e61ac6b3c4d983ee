import type { H3Event } from 'h3'
import type { SettingsInput } from '#shared/utils/schemas/team'
import type { SettingsView } from '#shared/types/team'
import { Organisation, settingsOf } from '../db/models'
import { database } from '../db/connection'
import type { SignedInUser } from './access'

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
