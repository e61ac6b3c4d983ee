import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

/** Who did what to which record, when, and from where. Rows are only ever inserted. */
export class AuditEntry extends Model<InferAttributes<AuditEntry>, InferCreationAttributes<AuditEntry>> {
  declare id: CreationOptional<number>
  declare organisationId: number | null
  declare actorUserId: number | null
  declare actorEmail: string | null
  declare action: string
  declare entityType: string | null
  declare entityId: string | null
  declare ip: string | null
  declare details: Record<string, unknown> | null
  declare createdAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    AuditEntry.init({
      id: { type: DataTypes.BIGINT.UNSIGNED, autoIncrement: true, primaryKey: true },
      organisationId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      actorUserId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      actorEmail: { type: DataTypes.STRING(254), allowNull: true },
      action: { type: DataTypes.STRING(64), allowNull: false },
      entityType: { type: DataTypes.STRING(64), allowNull: true },
      entityId: { type: DataTypes.STRING(64), allowNull: true },
      ip: { type: DataTypes.STRING(45), allowNull: true },
      details: { type: DataTypes.JSON, allowNull: true },
      createdAt: DataTypes.DATE
    }, { sequelize, tableName: 'audit_entries', updatedAt: false })
  }
}
