import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

import { DECISIONS, ITEM_STATES, NEGATIVE_AVAILABILITY, type Decision, type ItemState, type NegativeAvailability } from '../../src/lib/review/words.ts';

// The value lists live in pure modules that the browser can import too; the model uses them as they are.
export { DECISIONS, ITEM_STATES, NEGATIVE_AVAILABILITY, type Decision, type ItemState, type NegativeAvailability };

/** One print: its original scan, its analysis, its current correction and the operator's decision. */
export class Item extends Model<InferAttributes<Item>, InferCreationAttributes<Item>> {
  declare id: CreationOptional<string>;
  declare archiveId: string;
  declare batchId: string;
  declare originalId: string;
  declare seq: number;
  declare originalName: string;
  declare state: CreationOptional<ItemState>;
  declare failureReason: CreationOptional<string | null>;
  declare analysis: CreationOptional<Record<string, unknown> | null>;
  declare fadeGrade: CreationOptional<string | null>;
  declare currentVersion: CreationOptional<number | null>;
  declare thumbKey: CreationOptional<string | null>;
  declare previewKey: CreationOptional<string | null>;
  declare renderKey: CreationOptional<string | null>;
  declare renderVersion: CreationOptional<number | null>;
  /** The correction version the stored preview and thumbnail show. */
  declare previewVersion: CreationOptional<number | null>;
  /** The newest version a render job was sent for, and when (jobs/render.ts feeds the queue). */
  declare renderQueuedVersion: CreationOptional<number | null>;
  declare renderQueuedAt: CreationOptional<Date | null>;
  declare decision: CreationOptional<Decision | null>;
  declare decidedBy: CreationOptional<string | null>;
  declare decidedAt: CreationOptional<Date | null>;
  declare negativeAvailable: CreationOptional<NegativeAvailability | null>;
  declare negativeLocation: CreationOptional<string | null>;
  declare rescanNote: CreationOptional<string | null>;
  declare caption: CreationOptional<string | null>;
  declare dateEdtf: CreationOptional<string | null>;
  declare place: CreationOptional<string | null>;
  declare backText: CreationOptional<string | null>;
  declare envelope: CreationOptional<string | null>;
  /** The first print scan, kept when a rescan from the negative became the current original. */
  declare printOriginalId: CreationOptional<string | null>;
  declare metadataUpdatedAt: CreationOptional<Date | null>;
  declare lockVersion: CreationOptional<number>;
  /** Which upload (one drop of files) brought the print in: its prints are numbered by file name. */
  declare uploadKey: CreationOptional<string | null>;
  /** The worker holding the item in analysis (jobs/presence.ts), so one that starts can tell a dead worker's. */
  declare analysingBy: CreationOptional<string | null>;
  /** How often its analysis was cut short by its worker's death. */
  declare interruptions: CreationOptional<number>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
  /** When the print was removed: it stays restorable for 30 days, then the purge deletes it. */
  declare deletedAt: CreationOptional<Date | null>;

  static initModel(sequelize: Sequelize) {
    Item.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        archiveId: { type: DataTypes.UUID, allowNull: false },
        batchId: { type: DataTypes.UUID, allowNull: false },
        originalId: { type: DataTypes.UUID, allowNull: false },
        seq: { type: DataTypes.INTEGER, allowNull: false },
        originalName: { type: DataTypes.STRING(300), allowNull: false },
        state: { type: DataTypes.ENUM(...ITEM_STATES), allowNull: false, defaultValue: 'queued' },
        failureReason: DataTypes.TEXT,
        analysis: DataTypes.JSONB,
        fadeGrade: DataTypes.STRING(20),
        currentVersion: DataTypes.INTEGER,
        thumbKey: DataTypes.STRING(300),
        previewKey: DataTypes.STRING(300),
        renderKey: DataTypes.STRING(300),
        renderVersion: DataTypes.INTEGER,
        previewVersion: DataTypes.INTEGER,
        renderQueuedVersion: DataTypes.INTEGER,
        renderQueuedAt: DataTypes.DATE,
        decision: DataTypes.ENUM(...DECISIONS),
        decidedBy: DataTypes.UUID,
        decidedAt: DataTypes.DATE,
        negativeAvailable: DataTypes.ENUM(...NEGATIVE_AVAILABILITY),
        negativeLocation: DataTypes.STRING(300),
        rescanNote: DataTypes.TEXT,
        caption: DataTypes.TEXT,
        dateEdtf: DataTypes.STRING(100),
        place: DataTypes.STRING(300),
        backText: DataTypes.TEXT,
        envelope: DataTypes.STRING(300),
        printOriginalId: DataTypes.UUID,
        metadataUpdatedAt: DataTypes.DATE,
        lockVersion: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
        uploadKey: DataTypes.STRING(64),
        analysingBy: DataTypes.STRING(64),
        interruptions: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
        deletedAt: DataTypes.DATE,
      },
      // paranoid: every query through the model leaves removed prints out
      { sequelize, tableName: 'items', modelName: 'item', underscored: true, paranoid: true },
    );
  }
}
