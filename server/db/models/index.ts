import type { Sequelize } from 'sequelize'
import { AuditEntry } from './audit-entry'
import { DEFAULT_ORGANISATION_SETTINGS, Organisation, type OrganisationSettings } from './organisation'
import { SignInAttempt } from './sign-in-attempt'
import { User } from './user'

export { AuditEntry, DEFAULT_ORGANISATION_SETTINGS, Organisation, SignInAttempt, User }
export type { OrganisationSettings }

export function initModels(sequelize: Sequelize): void {
  Organisation.initModel(sequelize)
  User.initModel(sequelize)
  AuditEntry.initModel(sequelize)
  SignInAttempt.initModel(sequelize)
  Organisation.hasMany(User, { foreignKey: 'organisationId', as: 'users' })
  User.belongsTo(Organisation, { foreignKey: 'organisationId', as: 'organisation' })
}
