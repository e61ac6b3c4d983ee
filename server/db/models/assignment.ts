import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

/** An enumerator allowed to record visits in one village of one round. */
export class Assignment extends Model<InferAttributes<Assignment>, InferCreationAttributes<Assignment>> {
  declare id: CreationOptional<number>
  declare roundId: number
  declare villageId: number
  declare userId: number
  declare createdAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    Assignment.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      roundId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      villageId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      userId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      createdAt: DataTypes.DATE
    }, { sequelize, tableName: 'assignments', updatedAt: false })
  }
}
