import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

export const SUGGESTION_STATES = ['pending', 'accepted', 'declined'] as const;
export type SuggestionState = (typeof SUGGESTION_STATES)[number];

/** A viewer's suggested caption, date, place or people for one print, until an editor decides. */
export class Suggestion extends Model<InferAttributes<Suggestion>, InferCreationAttributes<Suggestion>> {
  declare id: CreationOptional<string>;
  declare archiveId: string;
  declare itemId: string;
  declare suggestedBy: string | null;
  declare caption: CreationOptional<string | null>;
  declare dateEdtf: CreationOptional<string | null>;
  declare place: CreationOptional<string | null>;
  declare people: CreationOptional<string[] | null>;
  declare note: CreationOptional<string | null>;
  /** Text for "Text on the back of the print". */
  declare backText: CreationOptional<string | null>;
  /** The back it was read from, for a suggestion the text recognition made (no person suggested it). */
  declare printBackId: CreationOptional<string | null>;
  /** Who wrote it on a contact sheet (a relative who may have no account); `suggestedBy` typed it in. */
  declare relativeName: CreationOptional<string | null>;
  /** The contact sheet it came back on. */
  declare contactSheetId: CreationOptional<string | null>;
  declare state: CreationOptional<SuggestionState>;
  declare decidedBy: CreationOptional<string | null>;
  declare decidedAt: CreationOptional<Date | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    Suggestion.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        archiveId: { type: DataTypes.UUID, allowNull: false },
        itemId: { type: DataTypes.UUID, allowNull: false },
        suggestedBy: DataTypes.UUID,
        caption: DataTypes.TEXT,
        dateEdtf: DataTypes.STRING(100),
        place: DataTypes.STRING(300),
        people: DataTypes.JSONB,
        note: DataTypes.TEXT,
        backText: DataTypes.TEXT,
        printBackId: DataTypes.UUID,
        relativeName: DataTypes.STRING(200),
        contactSheetId: DataTypes.UUID,
        state: { type: DataTypes.ENUM(...SUGGESTION_STATES), allowNull: false, defaultValue: 'pending' },
        decidedBy: DataTypes.UUID,
        decidedAt: DataTypes.DATE,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'suggestions', modelName: 'suggestion', underscored: true },
    );
  }
}
