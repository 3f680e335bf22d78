import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

import type { SheetPaper, SheetScope } from '../../src/lib/sheets/contact-sheet.ts';

/** Prints of one batch numbered for a paper contact sheet, in the order the sheet shows them. */
export class ContactSheet extends Model<InferAttributes<ContactSheet>, InferCreationAttributes<ContactSheet>> {
  declare id: CreationOptional<string>;
  declare archiveId: string;
  declare batchId: string;
  /** The sheet's number in its archive, printed on its cover ("Sheet 3"). */
  declare number: number;
  declare scope: SheetScope;
  declare paper: SheetPaper;
  declare itemIds: string[];
  declare madeBy: string | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    ContactSheet.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        archiveId: { type: DataTypes.UUID, allowNull: false },
        batchId: { type: DataTypes.UUID, allowNull: false },
        number: { type: DataTypes.INTEGER, allowNull: false },
        scope: { type: DataTypes.STRING(20), allowNull: false },
        paper: { type: DataTypes.STRING(10), allowNull: false },
        itemIds: { type: DataTypes.JSONB, allowNull: false },
        madeBy: DataTypes.UUID,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'contact_sheets', modelName: 'contactSheet', underscored: true },
    );
  }
}
