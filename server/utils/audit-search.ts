import { Op, type WhereOptions } from 'sequelize'
import { auditActionsMatching, auditRecordTypesMatching } from '#shared/utils/audit-words'
import { ModelRun, Organisation, Publication, Round, User, Village, Visit } from '../db/models'
import type { AuditEntry } from '../db/models'

/** At most this many records of one kind per typed word: enough for any name a person means, and a bound on the work. */
const MATCHES_PER_KIND = 500
const MAX_WORDS = 6

const likeOf = (text: string) => `%${text.replace(/[%_\\]/g, c => `\\${c}`)}%`
/** Never true: a word that matches nothing leaves the log empty. */
const NOTHING = { id: { [Op.in]: [] as number[] } }

/**
 * The audit entries a typed search means, as an index-friendly condition: every word (any case, anywhere in the
 * text) must be found in who did it (name or e-mail), the action's words, the record's type or the record's name
 * (a person, round, village, farm code, or the round of a fit or publication). Each word is first resolved to
 * ids in the small tables (people, rounds, villages; farm codes bounded by MATCHES_PER_KIND), then the log is read
 * by `action`, `actor_user_id` and `(entity_type, entity_id)`, all indexed with the organisation (migration 0110).
 */
export async function auditSearchWhere(organisationId: number, text: string): Promise<WhereOptions<AuditEntry>> {
  const words = [...new Set(text.toLowerCase().split(/\s+/).filter(Boolean))].slice(0, MAX_WORDS)
  const parts = await Promise.all(words.map(word => wordWhere(organisationId, word)))
  return { [Op.and]: parts }
}

async function wordWhere(organisationId: number, word: string): Promise<WhereOptions<AuditEntry>> {
  const like = { [Op.like]: likeOf(word) }
  const ids = (rows: Array<{ id: number | string }>) => rows.map(r => String(r.id))
  const [people, rounds, villages, visits, organisations] = await Promise.all([
    User.findAll({ where: { organisationId, [Op.or]: [{ name: like }, { email: like }] }, attributes: ['id'], limit: MATCHES_PER_KIND }),
    Round.findAll({ where: { organisationId, name: like }, attributes: ['id'], limit: MATCHES_PER_KIND }),
    Village.findAll({ where: { organisationId, [Op.or]: [{ name: like }, { code: like }] }, attributes: ['id'], limit: MATCHES_PER_KIND }),
    // Farm codes are the one large table: a short word would match too many, so only from three characters.
    word.length >= 3 ? Visit.findAll({ where: { organisationId, farmCode: like }, attributes: ['id'], limit: MATCHES_PER_KIND }) : [],
    Organisation.findAll({ where: { id: organisationId, name: like }, attributes: ['id'] })
  ])
  const roundIds = rounds.map(r => r.id)
  const [runs, publications] = roundIds.length
    ? await Promise.all([
        ModelRun.findAll({ where: { organisationId, roundId: roundIds }, attributes: ['id'], limit: MATCHES_PER_KIND }),
        Publication.findAll({ where: { organisationId, roundId: roundIds }, attributes: ['id'], limit: MATCHES_PER_KIND })
      ])
    : [[], []]
  const records: Array<[string, string[]]> = [
    ['user', ids(people)], ['round', ids(rounds)], ['village', ids(villages)], ['visit', ids(visits)],
    ['organisation', ids(organisations)], ['model_run', ids(runs)], ['publication', ids(publications)]
  ]
  const actions = auditActionsMatching(word)
  const types = auditRecordTypesMatching(word)
  const any: WhereOptions<AuditEntry>[] = [
    ...(actions.length ? [{ action: actions }] : []),
    ...(types.length ? [{ entityType: types }] : []),
    ...(people.length ? [{ actorUserId: people.map(p => p.id) }] : []),
    ...records.filter(([, list]) => list.length).map(([entityType, entityId]) => ({ entityType, entityId }))
  ]
  return any.length ? { [Op.or]: any } : NOTHING
}
