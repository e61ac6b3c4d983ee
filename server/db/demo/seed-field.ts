import type { Sequelize } from 'sequelize'
import demo from '../demo-people.json'
import { Assignment, Organisation, QuestionnaireVersion, Round, RoundVillage, User, Village, Visit } from '../models'
import { notAskedKeys } from '../../../shared/utils/schemas/visit'
import { DEMO_TECHNOLOGY, demoChecks, generateDemo } from './field-demo'
import { withDemoLanguages } from './demo-languages'
import { demoPlotsGroup, withDemoPlots } from './plots-demo'
import { registerDemoFarms, seedEarlierDemoRound } from './second-round'
import { seedDemoSample } from './sample-demo'

/** Villages (by index) the demo enumerator is assigned to in the demo round. */
export const DEMO_ASSIGNED_VILLAGES = [0, 3, 5, 8, 12, 17]

/**
 * Seeds the demo district, round, questionnaire and accepted visits for the demo organisation, once:
 * only when that organisation has no round yet, in one transaction. Returns true if it seeded.
 */
export async function seedDemoField(sequelize: Sequelize): Promise<boolean> {
  const organisation = await Organisation.findOne({ where: { slug: demo.organisation.slug } })
  if (!organisation || await Round.count({ where: { organisationId: organisation.id } }) > 0) return false
  const enumerator = await User.findOne({ where: { organisationId: organisation.id, role: 'enumerator' }, order: [['id', 'ASC']] })
  if (!enumerator) return false
  const { villages, questions, visits } = withDemoPlots(generateDemo())
  await sequelize.transaction(async (transaction) => {
    await Village.bulkCreate(villages.map(v => ({
      organisationId: organisation.id,
      code: v.code,
      name: v.name,
      district: demo.organisation.district,
      centreLat: v.centreLat,
      centreLon: v.centreLon,
      boundary: null
    })), { transaction })
    // Read the ids back by code: a multi-row insert's ids are not consecutive on a Galera cluster (auto-increment
    // steps by the node count), so the ids bulkCreate infers from the first one would be wrong there.
    const byCode = new Map((await Village.findAll({ where: { organisationId: organisation.id, code: villages.map(v => v.code) }, transaction })).map(v => [v.code, v]))
    const villageRows = villages.map(v => byCode.get(v.code)!)
    const round = await Round.create({
      organisationId: organisation.id,
      name: 'Sorghum seed adoption, 2026 short rains',
      technology: DEMO_TECHNOLOGY,
      season: '2026 short rains',
      status: 'open',
      currentVersionId: null
    }, { transaction })
    const version = await QuestionnaireVersion.create({ roundId: round.id, number: 1, definition: withDemoLanguages({ questions, checks: demoChecks(), groups: [demoPlotsGroup()] }), frozenAt: new Date() }, { transaction })
    await round.update({ currentVersionId: version.id }, { transaction })
    await RoundVillage.bulkCreate(villageRows.map(v => ({ roundId: round.id, villageId: v.id })), { transaction })
    await Assignment.bulkCreate(DEMO_ASSIGNED_VILLAGES.map(i => ({ roundId: round.id, villageId: villageRows[i]!.id, userId: enumerator.id })), { transaction })
    const rows = visits.map(v => ({
      id: v.id,
      organisationId: organisation.id,
      roundId: round.id,
      villageId: villageRows[v.villageIndex]!.id,
      enumeratorId: enumerator.id,
      questionnaireVersionId: version.id,
      farmCode: v.farmCode,
      lat: v.lat,
      lon: v.lon,
      accuracyM: v.accuracyM,
      manualLocationReason: null,
      answers: v.answers,
      notAsked: notAskedKeys(questions, v.answers).length ? notAskedKeys(questions, v.answers) : null,
      consentAt: v.startedAt,
      startedAt: v.startedAt,
      savedAt: v.savedAt,
      adopted: v.adopted,
      reviewState: 'accepted' as const,
      reviewReason: null,
      flags: v.flags,
      deviceHash: v.deviceHash,
      version: 2
    }))
    for (let i = 0; i < rows.length; i += 500) await Visit.bulkCreate(rows.slice(i, i + 500), { transaction })
    await seedEarlierDemoRound({ organisationId: organisation.id, enumeratorId: enumerator.id, villageRows, villages, later: visits, before: round, transaction })
    await registerDemoFarms(sequelize, organisation.id, transaction)
    await seedDemoSample({ organisationId: organisation.id, roundId: round.id, villages: villageRows, visitCodes: villageRows.map((_, g) => visits.filter(v => v.villageIndex === g).map(v => v.farmCode)), assigned: DEMO_ASSIGNED_VILLAGES }, transaction)
  })
  return true
}
