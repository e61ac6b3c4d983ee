import type { Sequelize } from 'sequelize'
import { Assignment } from './assignment'
import { AuditEntry } from './audit-entry'
import { DEFAULT_ORGANISATION_SETTINGS, Organisation, type OrganisationSettings } from './organisation'
import { Photo } from './photo'
import { QuestionnaireVersion } from './questionnaire-version'
import { ROUND_STATUSES, Round, type RoundStatus } from './round'
import { RoundVillage } from './round-village'
import { SignInAttempt } from './sign-in-attempt'
import { User } from './user'
import { Village } from './village'
import { REVIEW_STATES, Visit, type ReviewState, type VisitFlags } from './visit'

export { AuditEntry, DEFAULT_ORGANISATION_SETTINGS, Organisation, SignInAttempt, User }
export { Assignment, Photo, QuestionnaireVersion, REVIEW_STATES, ROUND_STATUSES, Round, RoundVillage, Village, Visit }
export type { OrganisationSettings, ReviewState, RoundStatus, VisitFlags }

export function initModels(sequelize: Sequelize): void {
  Organisation.initModel(sequelize)
  User.initModel(sequelize)
  AuditEntry.initModel(sequelize)
  SignInAttempt.initModel(sequelize)
  Organisation.hasMany(User, { foreignKey: 'organisationId', as: 'users' })
  User.belongsTo(Organisation, { foreignKey: 'organisationId', as: 'organisation' })

  Village.initModel(sequelize)
  Round.initModel(sequelize)
  QuestionnaireVersion.initModel(sequelize)
  RoundVillage.initModel(sequelize)
  Assignment.initModel(sequelize)
  Visit.initModel(sequelize)
  Photo.initModel(sequelize)
  Visit.belongsTo(Village, { foreignKey: 'villageId', as: 'village' })
  Visit.belongsTo(User, { foreignKey: 'enumeratorId', as: 'enumerator' })
}
