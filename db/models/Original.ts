import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

/** An untouched scan as uploaded: content-addressed by SHA-256, stored once per archive, never modified. */
export class Original extends Model<InferAttributes<Original>, InferCreationAttributes<Original>> {
  declare id: CreationOptional<string>;
  declare archiveId: string;
  declare sha256: string;
  declare storageKey: string;
  declare bytes: number;
  declare mime: string;
  declare width: number | null;
  declare height: number | null;
  declare exif: CreationOptional<Record<string, unknown>>;
  declare createdBy: string | null;
  declare createdAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    Original.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        archiveId: { type: DataTypes.UUID, allowNull: false },
        sha256: { type: DataTypes.STRING(64), allowNull: false },
        storageKey: { type: DataTypes.STRING(300), allowNull: false },
        bytes: {
          type: DataTypes.BIGINT,
          allowNull: false,
          get(this: Original) {
            return Number(this.getDataValue('bytes'));
          },
        },
        mime: { type: DataTypes.STRING(60), allowNull: false },
        width: DataTypes.INTEGER,
        height: DataTypes.INTEGER,
        exif: { type: DataTypes.JSONB, allowNull: false, defaultValue: {} },
        createdBy: DataTypes.UUID,
        createdAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'originals', modelName: 'original', underscored: true, updatedAt: false },
    );
  }
}
