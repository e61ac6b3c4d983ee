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
  /** Visits wanted per village; the round page shows progress against it (null: none set). */
  declare targetVisitsPerVillage: CreationOptional<number | null>
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
      targetVisitsPerVillage: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true, defaultValue: null },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE
    }, { sequelize, tableName: 'rounds' })
  }
}
