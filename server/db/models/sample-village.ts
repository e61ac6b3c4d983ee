import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

/** The stage-1 facts of one village of a round's sample: farms listed (N_v) and the village's selection probability. */
export class SampleVillage extends Model<InferAttributes<SampleVillage>, InferCreationAttributes<SampleVillage>> {
  declare id: CreationOptional<number>
  declare organisationId: number
  declare roundId: number
  declare villageId: number
  declare listedFarms: number | null
  declare selectionProbability: number | null
  declare updatedBy: number | null
  declare createdAt: CreationOptional<Date>
  declare updatedAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    SampleVillage.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      organisationId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      roundId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      villageId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      listedFarms: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      selectionProbability: { type: DataTypes.DOUBLE, allowNull: true },
      updatedBy: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3)
    }, { sequelize, tableName: 'sample_villages' })
  }
}
