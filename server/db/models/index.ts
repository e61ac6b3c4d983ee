import type { Sequelize } from 'sequelize'
import { AuditEntry } from './audit-entry'
import { MAIL_STATUSES, MailMessage, type MailStatus } from './mail-message'
import { DEFAULT_ORGANISATION_SETTINGS, Organisation, settingsOf, type FunderOrganisation, type OrganisationSettings } from './organisation'
import { RateEvent } from './rate-event'
import { SignInAttempt } from './sign-in-attempt'
import { User } from './user'
import { TOKEN_PURPOSES, UserToken, type TokenPurpose } from './user-token'

export { AuditEntry, DEFAULT_ORGANISATION_SETTINGS, MAIL_STATUSES, MailMessage, Organisation, RateEvent, SignInAttempt, TOKEN_PURPOSES, User, UserToken, settingsOf }
export type { FunderOrganisation, MailStatus, OrganisationSettings, TokenPurpose }

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
}
