import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

export const IMPORT_MODES = ['all-or-nothing', 'valid-only'] as const
export type ImportMode = typeof IMPORT_MODES[number]

/** One CSV import of past survey data into a round: who, when, which file and how many rows. */
export class ImportBatch extends Model<InferAttributes<ImportBatch>, InferCreationAttributes<ImportBatch>> {
  declare id: CreationOptional<number>
  declare organisationId: number
  declare roundId: number
  declare questionnaireVersionId: number
  declare importedBy: number
  declare fileName: string
  declare fileSha256: string
  declare mode: ImportMode
  declare rowsTotal: number
  declare rowsImported: number
  declare rowsRejected: number
  declare createdAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    ImportBatch.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      organisationId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      roundId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      questionnaireVersionId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      importedBy: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      fileName: { type: DataTypes.STRING(200), allowNull: false },
      fileSha256: { type: DataTypes.CHAR(64), allowNull: false },
      mode: { type: DataTypes.ENUM(...IMPORT_MODES), allowNull: false },
      rowsTotal: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      rowsImported: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      rowsRejected: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      createdAt: DataTypes.DATE
    }, { sequelize, tableName: 'imports', updatedAt: false })
  }
}
