import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

/** A person shown in one print, in the order the caption names them. */
export class ItemPerson extends Model<InferAttributes<ItemPerson>, InferCreationAttributes<ItemPerson>> {
  declare itemId: string;
  declare personId: string;
  declare position: CreationOptional<number>;

  static initModel(sequelize: Sequelize) {
    ItemPerson.init(
      {
        itemId: { type: DataTypes.UUID, primaryKey: true },
        personId: { type: DataTypes.UUID, primaryKey: true },
        position: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      },
      { sequelize, tableName: 'item_people', modelName: 'itemPerson', underscored: true, timestamps: false },
    );
  }
}
