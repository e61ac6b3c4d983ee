import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

export const REVIEW_STATES = ['received', 'accepted', 'sent_back'] as const
export type ReviewState = typeof REVIEW_STATES[number]
export const VISIT_SOURCES = ['device', 'import'] as const
export type VisitSource = typeof VISIT_SOURCES[number]

/** Quality flags the server computes on every stored visit. */
export interface VisitFlags {
  duplicateFarmCode?: true
  farFromVillageKm?: number
  edgeValues?: string[]
  tooFastSeconds?: number
  /** The farm code is registered in another village (its name): the visit is not linked to the farm. */
  farmInOtherVillage?: string
}

/** One farm visit; its id is made on the device, so a resend upserts instead of duplicating. */
export class Visit extends Model<InferAttributes<Visit>, InferCreationAttributes<Visit>> {
  declare id: string
  declare organisationId: number
  declare roundId: number
  declare villageId: number
  declare enumeratorId: number
  declare questionnaireVersionId: number
  declare farmCode: string
  declare lat: number | null
  declare lon: number | null
  declare accuracyM: number | null
  declare manualLocationReason: string | null
  declare answers: Record<string, unknown>
  /** Keys of the questions the visit's conditions hid (not asked, as opposed to unanswered); null: none. */
  declare notAsked: CreationOptional<string[] | null>
  declare consentAt: Date
  declare startedAt: Date
  declare savedAt: Date
  declare adopted: number
  declare reviewState: CreationOptional<ReviewState>
  declare reviewReason: string | null
  declare flags: VisitFlags
  /** The registered farm (migration 0240); null while the farm's home village is another village. */
  declare farmId: CreationOptional<number | null>
  declare deviceHash: string
  /** The tablet's own id for this visit when the server had to store it under another (migration 0070); else null. */
  declare deviceId: CreationOptional<string | null>
  declare version: CreationOptional<number>
  /** 'import' for past survey data loaded from a CSV file (then importId names the import). */
  declare source: CreationOptional<VisitSource>
  declare importId: CreationOptional<number | null>
  /** Set when the retention purge replaced the farm code by its pseudonym and dropped free-text answers. */
  declare namesPurgedAt: CreationOptional<Date | null>
  declare createdAt: CreationOptional<Date>
  declare updatedAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    Visit.init({
      id: { type: DataTypes.CHAR(36), primaryKey: true },
      organisationId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      roundId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      villageId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      enumeratorId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      questionnaireVersionId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      farmCode: { type: DataTypes.STRING(40), allowNull: false },
      lat: { type: DataTypes.DOUBLE, allowNull: true },
      lon: { type: DataTypes.DOUBLE, allowNull: true },
      accuracyM: { type: DataTypes.DOUBLE, allowNull: true },
      manualLocationReason: { type: DataTypes.STRING(300), allowNull: true },
      answers: { type: DataTypes.JSON, allowNull: false },
      notAsked: { type: DataTypes.JSON, allowNull: true },
      consentAt: { type: DataTypes.DATE(3), allowNull: false },
      startedAt: { type: DataTypes.DATE(3), allowNull: false },
      savedAt: { type: DataTypes.DATE(3), allowNull: false },
      adopted: { type: DataTypes.TINYINT, allowNull: false },
      reviewState: { type: DataTypes.ENUM(...REVIEW_STATES), allowNull: false, defaultValue: 'received' },
      reviewReason: { type: DataTypes.STRING(500), allowNull: true },
      flags: { type: DataTypes.JSON, allowNull: false },
      farmId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      deviceHash: { type: DataTypes.CHAR(64), allowNull: false },
      deviceId: { type: DataTypes.STRING(36), allowNull: true },
      version: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false, defaultValue: 1 },
      source: { type: DataTypes.ENUM(...VISIT_SOURCES), allowNull: false, defaultValue: 'device' },
      importId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: true },
      namesPurgedAt: { type: DataTypes.DATE(3), allowNull: true },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE
    }, { sequelize, tableName: 'visits' })
  }
}
