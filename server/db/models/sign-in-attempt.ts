import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

/**
 * Failed sign-ins, kept in the database rather than in process memory so that the limit holds
 * across every app server behind the load balancer.
 */
export class SignInAttempt extends Model<InferAttributes<SignInAttempt>, InferCreationAttributes<SignInAttempt>> {
  declare id: CreationOptional<number>
  declare email: string
  declare ip: string
  declare createdAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    SignInAttempt.init({
      id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
      email: { type: DataTypes.STRING(254), allowNull: false },
      ip: { type: DataTypes.STRING(45), allowNull: false },
      createdAt: DataTypes.DATE
    }, { sequelize, tableName: 'sign_in_attempts', updatedAt: false })
  }
}
