import type { QueryInterface } from 'sequelize'

// The audit log's search resolves what was typed to people, actions and records, then looks entries up by them:
// these two indexes let MariaDB answer each part from an index (an index merge) instead of reading the whole log.
export async function up({ context: qi }: { context: QueryInterface }) {
  await qi.addIndex('audit_entries', ['organisation_id', 'actor_user_id'], { name: 'audit_entries_org_actor' })
  await qi.addIndex('audit_entries', ['organisation_id', 'entity_type', 'entity_id'], { name: 'audit_entries_org_entity' })
}

export async function down({ context: qi }: { context: QueryInterface }) {
  await qi.removeIndex('audit_entries', 'audit_entries_org_entity')
  await qi.removeIndex('audit_entries', 'audit_entries_org_actor')
}
