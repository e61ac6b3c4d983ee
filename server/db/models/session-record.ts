import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type NonAttribute, type Sequelize } from 'sequelize'
import type { User } from './user'

/**
 * One signed-in browser or tablet. The cookie holds a random token; only its SHA-256 is stored, so a copy
 * of this table signs nobody in. A session ends when revoked, idle too long or past its absolute lifetime.
 */
export class SessionRecord extends Model<InferAttributes<SessionRecord>, InferCreationAttributes<SessionRecord>> {
  declare id: CreationOptional<number>
  declare userId: number
  declare tokenHash: string
  declare createdAt: CreationOptional<Date>
  declare lastSeenAt: Date
  declare expiresAt: Date
  declare revokedAt: CreationOptional<Date | null>
  declare revokedReason: CreationOptional<string | null>
  declare userAgent: string | null
  declare ip: string | null
  declare user?: NonAttribute<User>

  static initModel(sequelize: Sequelize) {
    SessionRecord.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      userId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      tokenHash: { type: DataTypes.CHAR(64), allowNull: false, unique: true },
      createdAt: DataTypes.DATE,
      lastSeenAt: { type: DataTypes.DATE, allowNull: false },
      expiresAt: { type: DataTypes.DATE, allowNull: false },
      revokedAt: { type: DataTypes.DATE, allowNull: true },
      revokedReason: { type: DataTypes.STRING(40), allowNull: true },
      userAgent: { type: DataTypes.STRING(255), allowNull: true },
      ip: { type: DataTypes.STRING(45), allowNull: true }
    }, { sequelize, tableName: 'sessions', updatedAt: false })
  }
}
