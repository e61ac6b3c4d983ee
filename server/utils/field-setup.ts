import { Op } from 'sequelize'
import type { FieldSetup, FieldVillage, VisitStates } from '#shared/types/field'
import { questionnaireDefinitionSchema } from '#shared/utils/schemas/questionnaire'
import { Assignment, QuestionnaireVersion, Round, Village, Visit } from '../db/models'
import { erasedVisitIdsFor } from './erasure'
import { serverCopyOf } from './field-sync'
import { purgedVisitIdsFor } from './retention-tablets'
import { sampleListsForEnumerator } from './sample-lists'

interface Actor { id: number, organisationId: number }

export async function fieldSetupFor(actor: Actor): Promise<FieldSetup> {
  const assignments = await Assignment.findAll({ where: { userId: actor.id } })
  const rounds = await Round.findAll({
    // Closed rounds too: the tablet keeps showing their drafts and sent-back visits (read-only) instead of losing them.
    where: { id: [...new Set(assignments.map(a => a.roundId))], organisationId: actor.organisationId, status: ['open', 'closed'] },
    order: [['id', 'ASC']]
  })
  const roundIds = rounds.map(r => r.id)
  const mine = assignments.filter(a => roundIds.includes(a.roundId))
  const [villages, versions] = await Promise.all([
    Village.findAll({ where: { id: [...new Set(mine.map(a => a.villageId))], organisationId: actor.organisationId }, order: [['name', 'ASC']] }),
    QuestionnaireVersion.findAll({ where: { roundId: roundIds, frozenAt: { [Op.ne]: null } }, order: [['roundId', 'ASC'], ['number', 'ASC']] })
  ])
  return {
    rounds: rounds.filter(r => r.currentVersionId !== null).map(r => ({
      id: r.id,
      status: r.status === 'closed' ? 'closed' as const : 'open' as const,
      name: r.name,
      technology: r.technology,
      season: r.season,
      currentVersionId: r.currentVersionId!,
      villageIds: mine.filter(a => a.roundId === r.id).map(a => a.villageId)
    })),
    // The boundary travels with the setup so the position picker can draw the village with no network and no tiles.
    villages: villages.map(v => ({ id: v.id, code: v.code, name: v.name, district: v.district, centreLat: v.centreLat, centreLon: v.centreLon, boundary: (v.boundary as FieldVillage['boundary']) ?? null })),
    questionnaires: versions.map(v => ({ id: v.id, roundId: v.roundId, number: v.number, definition: questionnaireDefinitionSchema.parse(v.definition) })),
    samples: await sampleListsForEnumerator(actor, mine),
    fetchedAt: new Date().toISOString()
  }
}

export async function visitStatesFor(actor: Actor, since?: Date): Promise<VisitStates> {
  const at = new Date()
  const where = { enumeratorId: actor.id, organisationId: actor.organisationId, ...(since ? { updatedAt: { [Op.gte]: since } } : {}) }
  const [visits, erasedOnRequest, purged] = await Promise.all([
    Visit.findAll({ where, order: [['updatedAt', 'DESC']], limit: 5000 }),
    erasedVisitIdsFor(actor, since),
    purgedVisitIdsFor(actor, since)
  ])
  const erased = [...new Set([...erasedOnRequest, ...purged])]
  // An erased visit is never sent back as a record (even when its non-identifying answers were kept): the tablet
  // is only told to drop its copy.
  const gone = new Set(erased)
  return { visits: visits.filter(v => !gone.has(v.deviceId ?? v.id)).map(serverCopyOf), erased, at: at.toISOString() }
}
