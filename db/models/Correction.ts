import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

export const CORRECTION_ORIGINS = ['proposed', 'pooled', 'operator', 'restored'] as const;
export type CorrectionOrigin = (typeof CORRECTION_ORIGINS)[number];

/** One version of an item's correction; versions are never edited, a change adds a new one. */
export class Correction extends Model<InferAttributes<Correction>, InferCreationAttributes<Correction>> {
  declare id: CreationOptional<string>;
  declare itemId: string;
  declare version: number;
  declare params: Record<string, unknown>;
  declare origin: CorrectionOrigin;
  declare createdBy: string | null;
  declare createdAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    Correction.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        itemId: { type: DataTypes.UUID, allowNull: false },
        version: { type: DataTypes.INTEGER, allowNull: false },
        params: { type: DataTypes.JSONB, allowNull: false },
        origin: { type: DataTypes.ENUM(...CORRECTION_ORIGINS), allowNull: false },
        createdBy: DataTypes.UUID,
        createdAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'corrections', modelName: 'correction', underscored: true, updatedAt: false },
    );
  }
}
