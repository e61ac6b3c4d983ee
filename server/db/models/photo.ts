import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

/** A photo of a visit in object storage; 'stored' only after the complete object was checked. */
export class Photo extends Model<InferAttributes<Photo>, InferCreationAttributes<Photo>> {
  declare id: string
  declare visitId: string
  /** The tablet's own id for this photo when the server had to store it under another (migration 0070); else null. */
  declare deviceId: CreationOptional<string | null>
  declare objectKey: string
  declare sizeBytes: number
  declare contentType: string
  declare sha256: string
  declare status: CreationOptional<'pending' | 'stored'>
  declare createdAt: CreationOptional<Date>
  declare updatedAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    Photo.init({
      id: { type: DataTypes.CHAR(36), primaryKey: true },
      visitId: { type: DataTypes.CHAR(36), allowNull: false },
      deviceId: { type: DataTypes.STRING(36), allowNull: true },
      objectKey: { type: DataTypes.STRING(200), allowNull: false },
      sizeBytes: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      contentType: { type: DataTypes.STRING(40), allowNull: false },
      sha256: { type: DataTypes.CHAR(64), allowNull: false },
      status: { type: DataTypes.ENUM('pending', 'stored'), allowNull: false, defaultValue: 'pending' },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE
    }, { sequelize, tableName: 'photos' })
  }
}
