import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

/** Someone shown in the prints: a tag reused across the whole archive. */
export class Person extends Model<InferAttributes<Person>, InferCreationAttributes<Person>> {
  declare id: CreationOptional<string>;
  declare archiveId: string;
  declare name: string;
  declare createdBy: CreationOptional<string | null>;
  declare createdAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    Person.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        archiveId: { type: DataTypes.UUID, allowNull: false },
        name: { type: DataTypes.STRING(200), allowNull: false },
        createdBy: DataTypes.UUID,
        createdAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'people', modelName: 'person', underscored: true, updatedAt: false },
    );
  }
}
