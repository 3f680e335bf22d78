import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

/** Who did what to what, and when. Append-only. */
export class AuditEvent extends Model<InferAttributes<AuditEvent>, InferCreationAttributes<AuditEvent>> {
  declare id: CreationOptional<string>;
  declare archiveId: string | null;
  declare actorId: string | null;
  declare action: string;
  declare subjectType: string;
  declare subjectId: string | null;
  declare details: CreationOptional<Record<string, unknown>>;
  declare requestId: CreationOptional<string | null>;
  declare createdAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    AuditEvent.init(
      {
        id: { type: DataTypes.BIGINT, primaryKey: true, autoIncrement: true },
        archiveId: DataTypes.UUID,
        actorId: DataTypes.UUID,
        action: { type: DataTypes.STRING(80), allowNull: false },
        subjectType: { type: DataTypes.STRING(40), allowNull: false },
        subjectId: DataTypes.STRING(80),
        details: { type: DataTypes.JSONB, allowNull: false, defaultValue: {} },
        requestId: DataTypes.STRING(40),
        createdAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'audit_events', modelName: 'auditEvent', underscored: true, updatedAt: false },
    );
  }
}
