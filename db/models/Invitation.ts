import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';
import type { Role } from '../../src/lib/auth/roles.ts';

/** An owner's invitation to join an archive; the token itself is only ever in the e-mail. */
export class Invitation extends Model<InferAttributes<Invitation>, InferCreationAttributes<Invitation>> {
  declare id: CreationOptional<string>;
  declare archiveId: string;
  declare email: string;
  declare role: Role;
  declare tokenHash: string;
  declare invitedBy: string | null;
  declare expiresAt: Date;
  declare acceptedAt: CreationOptional<Date | null>;
  declare revokedAt: CreationOptional<Date | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    Invitation.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        archiveId: { type: DataTypes.UUID, allowNull: false },
        email: { type: DataTypes.STRING(320), allowNull: false },
        role: { type: DataTypes.ENUM('owner', 'editor', 'viewer'), allowNull: false },
        tokenHash: { type: DataTypes.STRING(64), allowNull: false },
        invitedBy: DataTypes.UUID,
        expiresAt: { type: DataTypes.DATE, allowNull: false },
        acceptedAt: DataTypes.DATE,
        revokedAt: DataTypes.DATE,
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'invitations', modelName: 'invitation', underscored: true },
    );
  }
}
