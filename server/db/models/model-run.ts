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
  /** The next four are null until the fit has read its rows (a run answers before reading them). */
  declare questionnaireVersionIds: number[] | null
  /** Hash of the accepted visits as the fit read them (ids, villages, outcome and the answers the model uses). */
  declare rowsHash: string | null
  /** Hash of the ids of the rows the fit used (after listwise deletion) and the round's data version: equal hashes mean the same rows. */
  declare usedRowsHash: string | null
  declare rowCount: number | null
  declare excluded: ExcludedVisits | null
  /** The round's `dataVersion` when the fit read its rows; another value now means the data changed. */
  declare dataVersion: CreationOptional<number | null>
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
      questionnaireVersionIds: { type: DataTypes.JSON, allowNull: true },
      rowsHash: { type: DataTypes.CHAR(64), allowNull: true },
      usedRowsHash: { type: DataTypes.CHAR(64), allowNull: true },
      rowCount: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      excluded: { type: DataTypes.JSON, allowNull: true },
      dataVersion: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      engineVersion: { type: DataTypes.STRING(20), allowNull: false },
      results: { type: DataTypes.JSON, allowNull: true },
      error: { type: DataTypes.JSON, allowNull: true },
      durationMs: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      createdAt: DataTypes.DATE,
      finishedAt: { type: DataTypes.DATE, allowNull: true }
    }, { sequelize, tableName: 'model_runs', updatedAt: false })
  }
}
