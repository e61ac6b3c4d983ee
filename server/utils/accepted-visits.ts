import { Village, Visit } from '../db/models'

export interface AcceptedVisitRow {
  visitId: string
  villageId: number
  villageCode: string
  answers: Record<string, unknown>
  adopted: 0 | 1
  questionnaireVersion: number
}

/**
 * The rows a model of this round may use: accepted visits only, in a stable order (by id) so that a
 * row hash is reproducible. `questionnaireVersion` is the questionnaire version's id.
 */
export async function acceptedVisitsForRound(roundId: number, organisationId?: number): Promise<AcceptedVisitRow[]> {
  const visits = await Visit.findAll({
    where: { roundId, reviewState: 'accepted', ...(organisationId ? { organisationId } : {}) },
    attributes: ['id', 'villageId', 'answers', 'adopted', 'questionnaireVersionId'],
    include: [{ model: Village, as: 'village', attributes: ['code'] }],
    order: [['id', 'ASC']]
  })
  return visits.map((v) => {
    const village = (v as Visit & { village?: Village }).village
    return {
      visitId: v.id,
      villageId: v.villageId,
      villageCode: village?.code ?? '',
      answers: v.answers,
      adopted: v.adopted === 1 ? 1 : 0,
      questionnaireVersion: v.questionnaireVersionId
    }
  })
}
