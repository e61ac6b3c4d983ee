// The audit log in words: what each recorded action means to a person reading the log.

const ACTIONS: Record<string, string> = {
  'signin': 'Signed in',
  'signin.failed': 'Sign-in failed',
  'signin.blocked': 'Sign-in blocked after too many tries',
  'signin.refused': 'Sign-in refused',
  'signout': 'Signed out',
  'password.changed': 'Changed their password',
  'password.change_refused': 'Password change refused',
  'password.reset_requested': 'Asked for a password reset',
  'invitation.link_refused': 'Invitation link refused',
  'reset.link_refused': 'Reset link refused',
  'user.invited': 'Invited a person',
  'user.reinvited': 'Invited a person again',
  'user.role_changed': 'Changed a role',
  'user.deactivated': 'Deactivated a person',
  'user.reactivated': 'Reactivated a person',
  'settings.updated': 'Changed the settings',
  'round.create': 'Created a round',
  'round.open': 'Opened a round',
  'round.closed': 'Closed a round',
  'round.reopen': 'Reopened a round',
  'round.target': 'Set a round\'s target',
  'round.villages': 'Chose a round\'s villages',
  'round.assignments': 'Assigned enumerators',
  'round.sample_list': 'Saved a village\'s sample list',
  'round.export': 'Exported a round\'s visits',
  'questionnaire.save': 'Saved a questionnaire',
  'village.create': 'Added a village',
  'visit.accept': 'Accepted a visit',
  'visit.send_back': 'Sent a visit back',
  'visit.correct': 'Corrected a visit',
  'visit.farm_code': 'Corrected a visit\'s farm code',
  'visit.bulk_accept': 'Accepted unflagged visits together',
  'visits.import': 'Imported visits from a file',
  'model.fit': 'Fitted a model',
  'model.scenario': 'Ran scenarios',
  'publication.publish': 'Published to funders',
  'publication.replace': 'Replaced a publication',
  'publication.withdraw': 'Withdrew a publication',
  'farm.erase': 'Erased a farm\'s personal data',
  'round.export_identifying': 'Exported visits with farm codes and exact positions',
  'retention.purge': 'Purged personal data past its retention period',
  'privacy.settings': 'Changed the personal data rules',
  'field_device.set_up': 'Set up a tablet with a PIN',
  'field_device.pin_reset': 'Chose a new PIN for a tablet',
  'field_device.revoked': 'Withdrew a lost tablet'
}

/** An action as a sentence start; an action added later without words reads as its own name in plain letters. */
export function auditActionLabel(action: string): string {
  return ACTIONS[action] ?? action.replace(/[._]/g, ' ').replace(/^\w/, c => c.toUpperCase())
}

/** The actions the filter offers, in the order above. */
export const AUDIT_ACTION_CHOICES = Object.entries(ACTIONS).map(([value, label]) => ({ value, label }))

export const AUDIT_RECORD_TYPES: Record<string, string> = {
  user: 'Person',
  organisation: 'Organisation',
  round: 'Round',
  village: 'Village',
  visit: 'Visit',
  model_run: 'Model fit',
  publication: 'Publication',
  erasure: 'Erasure',
  field_device: 'Tablet'
}

const plain = (key: string) => key.replace(/[._]/g, ' ')

/** The actions whose words (or name) contain the typed text, any case: "role" finds "Changed a role". */
export function auditActionsMatching(text: string): string[] {
  const t = text.toLowerCase()
  return Object.entries(ACTIONS).filter(([key, label]) => label.toLowerCase().includes(t) || plain(key).includes(t)).map(([key]) => key)
}

/** The record types whose name contains the typed text, any case: "fit" finds model fits. */
export function auditRecordTypesMatching(text: string): string[] {
  const t = text.toLowerCase()
  return Object.entries(AUDIT_RECORD_TYPES).filter(([key, label]) => label.toLowerCase().includes(t) || plain(key).includes(t)).map(([key]) => key)
}

/**
 * A spreadsheet reads a cell starting with = + - @, a tab or a carriage return as a formula: such cells get a
 * leading apostrophe. Written small on purpose, to be swapped for the shared export helper once it exists.
 */
export function neutraliseCell(value: string): string {
  return /^[=+\-@\t\r]/.test(value) ? `'${value}` : value
}

/** One CSV field: neutralised, then quoted when it holds a separator, a quote or a line break. */
export function csvField(value: string): string {
  const safe = neutraliseCell(value)
  return /[",\n\r]/.test(safe) ? `"${safe.replace(/"/g, '""')}"` : safe
}
