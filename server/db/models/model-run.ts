import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'
import type { ModelRequest } from '../../../shared/utils/modelling/request'
import type { ModelResults, ModelSpec } from '../../../shared/utils/stats/types'

export const MODEL_RUN_STATES = ['running', 'done', 'failed'] as const
export type ModelRunState = typeof MODEL_RUN_STATES[number]

export interface ExcludedVisits {
  /** Visits of the round that are not accepted (received or sent back): models never use them. */
  notAccepted: Record<string, number>
}

/**
 * One fit: what was asked, on exactly which rows (their hash), with which engine, and what came out.
 * Specification + row hash + engine version reproduce the numbers.
 */
export class ModelRun extends Model<InferAttributes<ModelRun>, InferCreationAttributes<ModelRun>> {
  declare id: CreationOptional<number>
  declare organisationId: number
  declare roundId: number
  declare createdBy: number
  declare status: CreationOptional<ModelRunState>
  declare request: ModelRequest
  declare spec: ModelSpec
  declare questionnaireVersionIds: number[]
  declare rowsHash: string
  /** Hash of the rows the fit actually used (after listwise deletion): equal hashes mean the same rows. */
  declare usedRowsHash: string
  declare rowCount: number
  declare excluded: ExcludedVisits
  declare engineVersion: string
  declare results: ModelResults | null
  declare error: { code: string, message: string } | null
  declare durationMs: number | null
  declare createdAt: CreationOptional<Date>
  declare finishedAt: Date | null

  static initModel(sequelize: Sequelize) {
    ModelRun.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      organisationId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      roundId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      createdBy: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      status: { type: DataTypes.ENUM(...MODEL_RUN_STATES), allowNull: false, defaultValue: 'running' },
      request: { type: DataTypes.JSON, allowNull: false },
      spec: { type: DataTypes.JSON, allowNull: false },
      questionnaireVersionIds: { type: DataTypes.JSON, allowNull: false },
      rowsHash: { type: DataTypes.CHAR(64), allowNull: false },
      usedRowsHash: { type: DataTypes.CHAR(64), allowNull: false },
      rowCount: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      excluded: { type: DataTypes.JSON, allowNull: false },
      engineVersion: { type: DataTypes.STRING(20), allowNull: false },
      results: { type: DataTypes.JSON, allowNull: true },
      error: { type: DataTypes.JSON, allowNull: true },
      durationMs: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      createdAt: DataTypes.DATE,
      finishedAt: { type: DataTypes.DATE, allowNull: true }
    }, { sequelize, tableName: 'model_runs', updatedAt: false })
  }
}
