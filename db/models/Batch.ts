import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

import { SOURCE_KINDS, type SourceKind } from '../../src/lib/batches/schemas.ts';

export { SOURCE_KINDS, type SourceKind };

/** One sitting's scans from one physical source (a box, drawer, album or envelope). */
export class Batch extends Model<InferAttributes<Batch>, InferCreationAttributes<Batch>> {
  declare id: CreationOptional<string>;
  declare archiveId: string;
  declare name: string;
  declare sourceKind: CreationOptional<SourceKind>;
  declare sourceLabel: CreationOptional<string>;
  declare dateFrom: CreationOptional<string | null>;
  declare dateTo: CreationOptional<string | null>;
  declare notes: CreationOptional<string>;
  declare createdBy: string | null;
  declare finishedNotifiedAt: CreationOptional<Date | null>;
  /** When an upload request into the batch last started or ended (the batch is not quiet while uploads go on). */
  declare lastUploadAt: CreationOptional<Date | null>;
  /** Uploaded as rescans from the negatives: its scans are matched to the prints set aside for one. */
  declare holdsRescans: CreationOptional<boolean>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
  /** When the batch was removed (with its prints): restorable for 30 days, then purged. */
  declare deletedAt: CreationOptional<Date | null>;

  static initModel(sequelize: Sequelize) {
    Batch.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        archiveId: { type: DataTypes.UUID, allowNull: false },
        name: { type: DataTypes.STRING(200), allowNull: false },
        sourceKind: { type: DataTypes.ENUM(...SOURCE_KINDS), allowNull: false, defaultValue: 'box' },
        sourceLabel: { type: DataTypes.STRING(200), allowNull: false, defaultValue: '' },
        dateFrom: DataTypes.STRING(40),
        dateTo: DataTypes.STRING(40),
        notes: { type: DataTypes.TEXT, allowNull: false, defaultValue: '' },
        createdBy: DataTypes.UUID,
        finishedNotifiedAt: DataTypes.DATE,
        lastUploadAt: DataTypes.DATE,
        holdsRescans: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
        deletedAt: DataTypes.DATE,
      },
      // paranoid: every query through the model leaves removed batches out
      { sequelize, tableName: 'batches', modelName: 'batch', underscored: true, paranoid: true },
    );
  }
}
