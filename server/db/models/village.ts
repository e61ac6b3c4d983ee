import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize'

/** A place visits are recorded in: code, district, centre point and optionally a GeoJSON boundary. */
export class Village extends Model<InferAttributes<Village>, InferCreationAttributes<Village>> {
  declare id: CreationOptional<number>
  declare organisationId: number
  declare code: string
  declare name: string
  declare district: string
  declare centreLat: number
  declare centreLon: number
  declare boundary: Record<string, unknown> | null
  declare createdAt: CreationOptional<Date>
  declare updatedAt: CreationOptional<Date>

  static initModel(sequelize: Sequelize) {
    Village.init({
      id: { type: DataTypes.INTEGER.UNSIGNED, autoIncrement: true, primaryKey: true },
      organisationId: { type: DataTypes.INTEGER.UNSIGNED, allowNull: false },
      code: { type: DataTypes.STRING(32), allowNull: false },
      name: { type: DataTypes.STRING(120), allowNull: false },
      district: { type: DataTypes.STRING(120), allowNull: false },
      centreLat: { type: DataTypes.DOUBLE, allowNull: false },
      centreLon: { type: DataTypes.DOUBLE, allowNull: false },
      boundary: { type: DataTypes.JSON, allowNull: true },
      createdAt: DataTypes.DATE,
      updatedAt: DataTypes.DATE
    }, { sequelize, tableName: 'villages' })
  }
}
