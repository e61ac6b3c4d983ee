import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'
import type { DesignPlan } from '../../../shared/utils/stats/design'
import type { LinkName } from '../../../shared/utils/stats/links'
import type { ScenarioResult, VillagePrediction } from '../../../shared/utils/stats/types'

/** What a publication freezes: enough to draw the map and to predict a farm, and nothing household-level. */
export interface PublishedContent {
  link: LinkName
  plan: DesignPlan
  coefficients: Array<{ term: string, label: string, estimate: number }>
  overall: VillagePrediction
  villages: VillagePrediction[]
  scenarios: ScenarioResult[]
  farmsVisited: number
  /** Villages whose predicted adoption is below this share are flagged for the funder. */
  targetRate: number
  /** The round's target of visits per village when published (absent in publications made before it existed). */
  targetVisits?: number | null
}

/** The one model run of a round that funders and tablets see. Replaced or withdrawn rows stay, inactive. */
export class Publication extends Model<InferAttributes<Publication>, InferCreationAttributes<Publication>> {
  declare id: CreationOptional<number>
  declare organisationId: number
  declare roundId: number
  declare modelRunId: number
  declare note: string
  declare content: PublishedContent
  declare tabletAid: CreationOptional<boolean>
  declare active: CreationOptional<boolean>
  declare publishedBy: number
  declare withdrawnAt: Date | null
  declare createdAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    Publication.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      organisationId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      roundId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      modelRunId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      note: { type: DataTypes.STRING(500), allowNull: false },
      content: { type: DataTypes.JSON, allowNull: false },
      tabletAid: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      active: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
      publishedBy: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      withdrawnAt: { type: DataTypes.DATE, allowNull: true },
      createdAt: DataTypes.DATE
    }, { sequelize, tableName: 'publications', updatedAt: false })
  }
}
