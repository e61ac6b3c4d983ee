import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'
import type { QuestionnaireDefinition } from '../../../shared/utils/schemas/questionnaire'

/** One version of a round's questionnaire; frozen (never edited again) once the round has opened. */
export class QuestionnaireVersion extends Model<InferAttributes<QuestionnaireVersion>, InferCreationAttributes<QuestionnaireVersion>> {
  declare id: CreationOptional<number>
  declare roundId: number
  declare number: number
  declare definition: QuestionnaireDefinition
  declare frozenAt: Date | null
  declare createdAt: CreationOptional<Date>
  declare updatedAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    QuestionnaireVersion.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      roundId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      number: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      definition: { type: DataTypes.JSON, allowNull: false },
      frozenAt: { type: DataTypes.DATE, allowNull: true },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE
    }, { sequelize, tableName: 'questionnaire_versions' })
  }
}
