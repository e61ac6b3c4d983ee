import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

/**
 * Events that public routes count in a sliding window (a refused link from an address, a reset asked for
 * an e-mail). In the database, like sign-in attempts, so the limits hold across app servers.
 */
export class RateEvent extends Model<InferAttributes<RateEvent>, InferCreationAttributes<RateEvent>> {
  declare id: CreationOptional<number>
  declare bucket: string
  declare subject: string
  declare createdAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    RateEvent.init({
      id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
      bucket: { type: DataTypes.STRING(32), allowNull: false },
      subject: { type: DataTypes.STRING(254), allowNull: false },
      createdAt: DataTypes.DATE
    }, { sequelize, tableName: 'rate_events', updatedAt: false })
  }
}
