import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

export class RoundVillage extends Model<InferAttributes<RoundVillage>, InferCreationAttributes<RoundVillage>> {
  declare roundId: number
  declare villageId: number
  declare createdAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    RoundVillage.init({
      roundId: { type: DataTypes.INTEGER.UNSIGNED, primaryKey: true },
      villageId: { type: DataTypes.INTEGER.UNSIGNED, primaryKey: true },
      createdAt: DataTypes.DATE
    }, { sequelize, tableName: 'round_villages', updatedAt: false })
  }
}
