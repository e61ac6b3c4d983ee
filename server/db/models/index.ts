import type { Sequelize } from 'sequelize'
import { Assignment } from './assignment'
import { AuditEntry } from './audit-entry'
import { MAIL_STATUSES, MailMessage, type MailStatus } from './mail-message'
import { ModelRun } from './model-run'
import { IMPORT_MODES, ImportBatch, type ImportMode } from './import-batch'
import { DEFAULT_ORGANISATION_SETTINGS, Organisation, settingsOf, type FunderOrganisation, type OrganisationSettings } from './organisation'
import { Photo } from './photo'
import { Publication } from './publication'
import { QuestionnaireVersion } from './questionnaire-version'
import { RateEvent } from './rate-event'
import { ROUND_STATUSES, Round, type RoundStatus } from './round'
import { RoundVillage } from './round-village'
import { SampleFarm } from './sample-farm'
import { SampleVillage } from './sample-village'
import { SessionRecord } from './session-record'
import { SignInAttempt } from './sign-in-attempt'
import { User } from './user'
import { TOKEN_PURPOSES, UserToken, type TokenPurpose } from './user-token'
import { Village } from './village'
import { REVIEW_STATES, VISIT_SOURCES, Visit, type ReviewState, type VisitFlags, type VisitSource } from './visit'

export { AuditEntry, DEFAULT_ORGANISATION_SETTINGS, MAIL_STATUSES, MailMessage, Organisation, RateEvent, SignInAttempt, TOKEN_PURPOSES, User, UserToken, settingsOf }
export { Assignment, Photo, QuestionnaireVersion, REVIEW_STATES, ROUND_STATUSES, Round, RoundVillage, Village, Visit }
export { IMPORT_MODES, ImportBatch, ModelRun, Publication, SessionRecord, VISIT_SOURCES }
export { SampleFarm, SampleVillage }
export type { FunderOrganisation, ImportMode, VisitSource, MailStatus, OrganisationSettings, ReviewState, RoundStatus, TokenPurpose, VisitFlags }

export function initModels(sequelize: Sequelize): void {
  Organisation.initModel(sequelize)
  User.initModel(sequelize)
  AuditEntry.initModel(sequelize)
  SignInAttempt.initModel(sequelize)
  UserToken.initModel(sequelize)
  MailMessage.initModel(sequelize)
  RateEvent.initModel(sequelize)
  Organisation.hasMany(User, { foreignKey: 'organisationId', as: 'users' })
  User.belongsTo(Organisation, { foreignKey: 'organisationId', as: 'organisation' })
  User.hasMany(UserToken, { foreignKey: 'userId', as: 'tokens' })
  UserToken.belongsTo(User, { foreignKey: 'userId', as: 'user' })
  SessionRecord.initModel(sequelize)
  SessionRecord.belongsTo(User, { foreignKey: 'userId', as: 'user' })

  Village.initModel(sequelize)
  Round.initModel(sequelize)
  QuestionnaireVersion.initModel(sequelize)
  RoundVillage.initModel(sequelize)
  Assignment.initModel(sequelize)
  Visit.initModel(sequelize)
  Photo.initModel(sequelize)
  Visit.belongsTo(Village, { foreignKey: 'villageId', as: 'village' })
  Visit.belongsTo(User, { foreignKey: 'enumeratorId', as: 'enumerator' })

  ModelRun.initModel(sequelize)
  Publication.initModel(sequelize)
  ImportBatch.initModel(sequelize)
  SampleVillage.initModel(sequelize)
  SampleFarm.initModel(sequelize)
}
