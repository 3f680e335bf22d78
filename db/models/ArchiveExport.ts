import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

import { EXPORT_STATES, type ExportOptions, type ExportSelection, type ExportState, type ExportStep } from '../../src/lib/archive/exports.ts';

export { EXPORT_STATES, type ExportOptions, type ExportSelection, type ExportState, type ExportStep };

/** One export of an archive as a BagIt zip, with its progress and the result of its fixity check. */
export class ArchiveExport extends Model<InferAttributes<ArchiveExport>, InferCreationAttributes<ArchiveExport>> {
  declare id: CreationOptional<string>;
  declare archiveId: string;
  declare requestedBy: string | null;
  declare selection: ExportSelection;
  declare options: CreationOptional<ExportOptions>;
  declare state: CreationOptional<ExportState>;
  declare itemIds: CreationOptional<string[]>;
  declare progressDone: CreationOptional<number>;
  declare progressTotal: CreationOptional<number>;
  /** While running: packing the prints, or checking the written bag. */
  declare step: CreationOptional<ExportStep | null>;
  /** Files of the written bag checked against the manifest so far, and how many it lists. */
  declare checkDone: CreationOptional<number>;
  declare checkTotal: CreationOptional<number>;
  declare zipKey: CreationOptional<string | null>;
  declare zipBytes: CreationOptional<number | null>;
  declare zipSha256: CreationOptional<string | null>;
  declare verifiedAt: CreationOptional<Date | null>;
  declare failureReason: CreationOptional<string | null>;
  declare startedAt: CreationOptional<Date | null>;
  declare finishedAt: CreationOptional<Date | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    ArchiveExport.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        archiveId: { type: DataTypes.UUID, allowNull: false },
        requestedBy: DataTypes.UUID,
        selection: { type: DataTypes.JSONB, allowNull: false },
        options: { type: DataTypes.JSONB, allowNull: false, defaultValue: {} },
        state: { type: DataTypes.ENUM(...EXPORT_STATES), allowNull: false, defaultValue: 'queued' },
        itemIds: { type: DataTypes.JSONB, allowNull: false, defaultValue: [] },
        progressDone: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
        progressTotal: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
        step: DataTypes.STRING(20),
        checkDone: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
        checkTotal: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
        zipKey: DataTypes.STRING(300),
        zipBytes: {
          type: DataTypes.BIGINT,
          get(this: ArchiveExport) {
            const v = this.getDataValue('zipBytes');
            return v === null || v === undefined ? null : Number(v);
          },
        },
        zipSha256: DataTypes.STRING(64),
        verifiedAt: DataTypes.DATE,
        failureReason: DataTypes.TEXT,
        startedAt: DataTypes.DATE,
        finishedAt: DataTypes.DATE,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'exports', modelName: 'archiveExport', underscored: true },
    );
  }
}
