import type { Question } from '#shared/utils/schemas/questionnaire'
import { MAX_PANEL_ROUNDS } from '#shared/utils/schemas/panel'
import { QueryTypes } from 'sequelize'
import { QuestionnaireVersion, Round } from '../db/models'
import { database } from '../db/connection'

// Several rounds of one questionnaire family: rounds whose questionnaires share question keys (a round copied from
// an earlier one keeps its keys). What can be compared across them is what they have in common: a question with the
// same key and the same kind of answer in every round.

export interface PanelRound {
  id: number
  name: string
  /** 1, 2, … in the order the rounds were created. */
  order: number
  /** "1. Long rains 2025": the round's level in a model (sorted by its number) and its name on screen. */
  label: string
  dataVersion: number
}

export interface RoundFamily {
  rounds: PanelRound[]
  /** The questions every round has, with the same key and kind, as the earliest round words them. */
  questions: Question[]
}

const sameKind = (a: Question, b: Question) => a.type === b.type

/** The rounds (this organisation's; 404 otherwise) in creation order and the questions they share. */
export async function roundFamily(organisationId: number, roundIds: number[]): Promise<RoundFamily> {
  const ids = [...new Set(roundIds)]
  if (ids.length < 2) throw createError({ statusCode: 400, message: 'Choose at least two different rounds.' })
  if (ids.length > MAX_PANEL_ROUNDS) throw createError({ statusCode: 400, message: `At most ${MAX_PANEL_ROUNDS} rounds together.` })
  const rounds = await Round.findAll({ where: { id: ids, organisationId }, order: [['createdAt', 'ASC'], ['id', 'ASC']] })
  if (rounds.length !== ids.length) throw createError({ statusCode: 404, message: 'No such survey round.' })
  const versions = await QuestionnaireVersion.findAll({ where: { id: rounds.map(r => r.currentVersionId ?? 0) }, attributes: ['id', 'definition'] })
  const questionsOf = (r: Round) => versions.find(v => v.id === r.currentVersionId)?.definition.questions ?? []
  const [first, ...others] = rounds.map(questionsOf)
  const questions = (first ?? []).filter(q => others.every(list => list.some(o => o.key === q.key && sameKind(o, q))))
  return {
    rounds: rounds.map((r, i) => ({ id: r.id, name: r.name, order: i + 1, label: `${i + 1}. ${r.name}`, dataVersion: r.dataVersion })),
    questions
  }
}

/** Another round the builder can add to this one: how many accepted visits it has and which questions it lacks. */
export interface CompanionRound {
  id: number
  name: string
  status: string
  accepted: number
  /** Labels of this round's questions that the other round has not (same key and kind): they cannot be used together. */
  missing: string[]
}

/** The organisation's other rounds with a questionnaire, newest first, for the builder's "several rounds together". */
export async function companionRounds(organisationId: number, roundId: number): Promise<CompanionRound[]> {
  const rounds = await Round.findAll({ where: { organisationId }, order: [['createdAt', 'DESC'], ['id', 'DESC']] })
  const own = rounds.find(r => r.id === roundId)
  if (!own) throw createError({ statusCode: 404, message: 'No such survey round.' })
  const others = rounds.filter(r => r.id !== roundId && r.currentVersionId)
  const versions = await QuestionnaireVersion.findAll({ where: { id: [own.currentVersionId ?? 0, ...others.map(r => r.currentVersionId!)] }, attributes: ['id', 'definition'] })
  const questionsOf = (r: Round) => versions.find(v => v.id === r.currentVersionId)?.definition.questions ?? []
  const counts = others.length
    ? await database().query<{ roundId: number, n: number | bigint }>(`SELECT round_id AS roundId, COUNT(*) AS n FROM visits
        WHERE round_id IN (?) AND review_state = 'accepted' GROUP BY round_id`, { replacements: [others.map(r => r.id)], type: QueryTypes.SELECT })
    : []
  const mine = questionsOf(own)
  return others.map((r) => {
    const theirs = questionsOf(r)
    return {
      id: r.id,
      name: r.name,
      status: r.status,
      accepted: Number(counts.find(c => Number(c.roundId) === r.id)?.n ?? 0),
      missing: mine.filter(q => !theirs.some(o => o.key === q.key && sameKind(o, q))).map(q => q.label)
    }
  })
}
