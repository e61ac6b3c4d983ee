import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

export const TOKEN_PURPOSES = ['invitation', 'reset'] as const
export type TokenPurpose = typeof TOKEN_PURPOSES[number]

/**
 * A single-use link for an invitation or a password reset. Only the SHA-256 of the link's secret part is
 * kept, so a copy of this table opens no account. A newer link of the same purpose revokes the older ones.
 */
export class UserToken extends Model<InferAttributes<UserToken>, InferCreationAttributes<UserToken>> {
  declare id: CreationOptional<number>
  declare userId: number
  declare purpose: TokenPurpose
  declare tokenHash: string
  declare expiresAt: Date
  declare usedAt: Date | null
  declare revokedAt: Date | null
  declare createdByUserId: number | null
  declare createdAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    UserToken.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      userId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      purpose: { type: DataTypes.ENUM(...TOKEN_PURPOSES), allowNull: false },
      tokenHash: { type: DataTypes.CHAR(64), allowNull: false },
      expiresAt: { type: DataTypes.DATE, allowNull: false },
      usedAt: { type: DataTypes.DATE, allowNull: true },
      revokedAt: { type: DataTypes.DATE, allowNull: true },
      createdByUserId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      createdAt: DataTypes.DATE
    }, { sequelize, tableName: 'user_tokens', updatedAt: false })
  }
}
