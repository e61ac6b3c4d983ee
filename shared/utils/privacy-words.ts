// What the product protects of farmers' personal data and how, in the words the settings page, the farmers' data
// page and the export read-mes use. Keep these true when the protection changes.
export const PRIVACY_PROTECTIONS: readonly string[] = [
  'Personal data here means farm codes, names, where a farm is (GPS points, typed positions, the reasons given for no fix), photos and free-text answers.',
  'Erasure on request: when a farmer withdraws consent, a coordinator erases the farm\'s personal data from the database, the photo storage, every tablet holding its visits (at the tablet\'s next sync) and every later export. The audit log keeps the reason, never the erased values.',
  'Retention: after a round closes, photos, positions and names are purged when the periods an administrator sets (Settings) have passed; farm codes are then replaced by their pseudonyms.',
  'Exports for analysts carry pseudonyms instead of farm codes and positions rounded to the chosen precision; an export with farm codes and exact positions needs a stated reason and is recorded in the audit log.',
  'Backups keep what was live when they were made: an erased or purged item leaves the backups only when the sets holding it age out.'
]

export const EXPORT_PRIVACY_NOTE = 'Farm codes are replaced by pseudonyms (the same farm has the same pseudonym in every export of the organisation) and positions are rounded; an erased farm appears under its new id, if at all.'
