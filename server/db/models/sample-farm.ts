import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'
import type { SampleOutcome } from '#shared/utils/schemas/sample'

/** One drawn farm of a round × village: rank 0 is the main sample, 1..n the replacements in the order to use them. */
export class SampleFarm extends Model<InferAttributes<SampleFarm>, InferCreationAttributes<SampleFarm>> {
  declare id: CreationOptional<number>
  declare organisationId: number
  declare roundId: number
  declare villageId: number
  declare farmCode: string
  declare sampleRank: number
  /** Personal data: shown to coordinators and to the enumerator assigned to the village only. */
  declare headName: string | null
  declare hint: string | null
  declare lat: number | null
  declare lon: number | null
  declare outcome: SampleOutcome | null
  declare outcomeNote: string | null
  declare replacedBy: string | null
  declare outcomeBy: number | null
  declare outcomeAt: Date | null
  declare namesPurgedAt: CreationOptional<Date | null>
  declare createdAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    SampleFarm.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      organisationId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      roundId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      villageId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      farmCode: { type: DataTypes.STRING(40), allowNull: false },
      sampleRank: { type: DataTypes.SMALLINT.UNSIGNED, allowNull: false },
      headName: { type: DataTypes.STRING(120), allowNull: true },
      hint: { type: DataTypes.STRING(200), allowNull: true },
      lat: { type: DataTypes.DOUBLE, allowNull: true },
      lon: { type: DataTypes.DOUBLE, allowNull: true },
      outcome: { type: DataTypes.STRING(16), allowNull: true },
      outcomeNote: { type: DataTypes.STRING(300), allowNull: true },
      replacedBy: { type: DataTypes.STRING(40), allowNull: true },
      outcomeBy: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      outcomeAt: { type: DataTypes.DATE(3), allowNull: true },
      namesPurgedAt: { type: DataTypes.DATE(3), allowNull: true },
      createdAt: DataTypes.DATE(3)
    }, { sequelize, tableName: 'sample_farms', updatedAt: false })
  }
}
