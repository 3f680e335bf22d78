import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

/** One family's (or one client's) archive: everything else belongs to exactly one. */
export class Archive extends Model<InferAttributes<Archive>, InferCreationAttributes<Archive>> {
  declare id: CreationOptional<string>;
  declare slug: string;
  declare name: string;
  declare description: CreationOptional<string | null>;
  /** The IANA time zone its dates and times are shown in. */
  declare timeZone: CreationOptional<string>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    Archive.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        slug: { type: DataTypes.STRING(80), allowNull: false, unique: true },
        name: { type: DataTypes.STRING(200), allowNull: false },
        description: DataTypes.TEXT,
        timeZone: { type: DataTypes.STRING(64), allowNull: false, defaultValue: 'UTC' },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'archives', modelName: 'archive', underscored: true },
    );
  }
}
