import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

/** How a back came to its front: by the file names, by the scanner's feed order, or by hand; `apart` once unpaired by hand. */
export const BACK_PAIRINGS = ['name', 'feed order', 'hand', 'apart'] as const;
export type BackPairing = (typeof BACK_PAIRINGS)[number];

/**
 * The scan of a print's back: an original of its own (write-once, in backups), never analysed or
 * corrected as a picture, paired with the print it is the back of (`frontItemId`) or waiting to be.
 */
export class PrintBack extends Model<InferAttributes<PrintBack>, InferCreationAttributes<PrintBack>> {
  declare id: CreationOptional<string>;
  declare archiveId: string;
  declare batchId: string;
  declare originalId: string;
  declare originalName: string;
  declare uploadKey: CreationOptional<string | null>;
  declare frontItemId: CreationOptional<string | null>;
  declare pairedBy: CreationOptional<BackPairing | null>;
  /** What the back recognition measured (src/lib/backs/paper-back.ts). */
  declare measure: CreationOptional<Record<string, unknown> | null>;
  declare thumbKey: CreationOptional<string | null>;
  declare previewKey: CreationOptional<string | null>;
  /** The text read from the back (OCR), as read. */
  declare backText: CreationOptional<string | null>;
  declare textReadAt: CreationOptional<Date | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    PrintBack.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        archiveId: { type: DataTypes.UUID, allowNull: false },
        batchId: { type: DataTypes.UUID, allowNull: false },
        originalId: { type: DataTypes.UUID, allowNull: false },
        originalName: { type: DataTypes.STRING(300), allowNull: false },
        uploadKey: DataTypes.STRING(64),
        frontItemId: DataTypes.UUID,
        pairedBy: DataTypes.STRING(20),
        measure: DataTypes.JSONB,
        thumbKey: DataTypes.STRING(300),
        previewKey: DataTypes.STRING(300),
        backText: DataTypes.TEXT,
        textReadAt: DataTypes.DATE,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'print_backs', modelName: 'printBack', underscored: true },
    );
  }
}
