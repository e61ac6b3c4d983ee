import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

export const ROUND_STATUSES = ['draft', 'open', 'closed'] as const
export type RoundStatus = typeof ROUND_STATUSES[number]

/** One survey round: one technology, one season, a set of villages and a versioned questionnaire. */
export class Round extends Model<InferAttributes<Round>, InferCreationAttributes<Round>> {
  declare id: CreationOptional<number>
  declare organisationId: number
  declare name: string
  declare technology: string
  declare season: string
  declare status: CreationOptional<RoundStatus>
  declare currentVersionId: number | null
  /** Goes up by one in the same transaction as every change to the round's accepted visits (see `bumpDataVersion`). */
  declare dataVersion: CreationOptional<number>
  /** Visits wanted per village; villages below it are marked on the map. Null: no target set. */
  declare targetVisitsPerVillage: CreationOptional<number | null>
  /** When the round was last closed; retention periods count from it. Null while draft or open. */
  declare closedAt: CreationOptional<Date | null>
  declare createdAt: CreationOptional<Date>
  declare updatedAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    Round.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      organisationId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      name: { type: DataTypes.STRING(160), allowNull: false },
      technology: { type: DataTypes.STRING(160), allowNull: false },
      season: { type: DataTypes.STRING(60), allowNull: false },
      status: { type: DataTypes.ENUM(...ROUND_STATUSES), allowNull: false, defaultValue: 'draft' },
      currentVersionId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      dataVersion: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 0 },
      targetVisitsPerVillage: { type: DataTypes.SMALLINT.UNSIGNED, allowNull: true },
      closedAt: { type: DataTypes.DATE(3), allowNull: true },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE
    }, { sequelize, tableName: 'rounds' })
  }
}
