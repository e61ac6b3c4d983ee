import { DataTypes, Model, type CreationOptional, type ForeignKey, type InferAttributes, type InferCreationAttributes, type NonAttribute, type Sequelize } from 'sequelize'
import { ROLES, type Role } from '../../../shared/utils/roles'
import type { Organisation } from './organisation'

export class User extends Model<InferAttributes<User>, InferCreationAttributes<User>> {
  declare id: CreationOptional<number>
  declare organisationId: ForeignKey<Organisation['id']>
  declare email: string
  declare name: string
  declare role: Role
  /** scrypt hash from nuxt-auth-utils' hashPassword; null until an invitation is accepted. */
  declare passwordHash: string | null
  declare active: CreationOptional<boolean>
  declare lastSignInAt: Date | null
  declare passwordChangedAt: CreationOptional<Date | null>
  /** When the latest invitation was sent; null for people created otherwise (the demo seed). */
  declare invitedAt: CreationOptional<Date | null>
  declare createdAt: CreationOptional<Date>
  declare updatedAt: CreationOptional<Date>
  declare organisation?: NonAttribute<Organisation>

  static initModel(sequelize: Sequelize) {
    User.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      // Unique per organisation; at most one account per address holds a password (migration 0060).
      email: { type: DataTypes.STRING(254), allowNull: false },
      name: { type: DataTypes.STRING(160), allowNull: false },
      role: { type: DataTypes.ENUM(...ROLES), allowNull: false },
      passwordHash: { type: DataTypes.STRING(255), allowNull: true },
      active: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
      lastSignInAt: { type: DataTypes.DATE, allowNull: true },
      passwordChangedAt: { type: DataTypes.DATE, allowNull: true },
      invitedAt: { type: DataTypes.DATE, allowNull: true },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE
    }, { sequelize, tableName: 'users' })
  }
}
