import { DEFAULT_PRIVACY_SETTINGS, type PrivacySettings } from '../../../shared/utils/schemas/privacy'
import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

export interface FunderOrganisation {
  name: string
  /** Funder accounts whose e-mail ends in @domain belong to this funder organisation. */
  emailDomain: string
}

export interface OrganisationSettings {
  /** Villages with fewer visits than this are hidden from funders (small-cell suppression). */
  minVisitsForFunders: number
  defaultClusterVariable: string
  /** The funder organisations that may see published rounds; an empty list lets no funder see them. */
  funderOrganisations: FunderOrganisation[]
  /** Farmers' personal data: retention after a round closes, and what an erasure keeps. */
  privacy: PrivacySettings
}

export const DEFAULT_ORGANISATION_SETTINGS: OrganisationSettings = {
  minVisitsForFunders: 5,
  defaultClusterVariable: 'village',
  funderOrganisations: [],
  privacy: DEFAULT_PRIVACY_SETTINGS
}

/** Settings as stored, completed with the defaults of keys added after the row was written. */
export function settingsOf(organisation: Organisation): OrganisationSettings {
  const stored = organisation.settings
  return {
    ...DEFAULT_ORGANISATION_SETTINGS,
    ...stored,
    privacy: {
      ...DEFAULT_PRIVACY_SETTINGS,
      ...stored?.privacy,
      retentionDays: { ...DEFAULT_PRIVACY_SETTINGS.retentionDays, ...stored?.privacy?.retentionDays }
    }
  }
}

export class Organisation extends Model<InferAttributes<Organisation>, InferCreationAttributes<Organisation>> {
  declare id: CreationOptional<number>
  declare name: string
  declare slug: string
  declare settings: CreationOptional<OrganisationSettings>
  declare createdAt: CreationOptional<Date>
  declare updatedAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    Organisation.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      name: { type: DataTypes.STRING(160), allowNull: false },
      slug: { type: DataTypes.STRING(80), allowNull: false, unique: true },
      settings: { type: DataTypes.JSON, allowNull: false, defaultValue: DEFAULT_ORGANISATION_SETTINGS },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE
    }, { sequelize, tableName: 'organisations' })
  }
}
