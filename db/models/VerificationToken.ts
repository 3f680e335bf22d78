import { DataTypes, Model, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

/** One-time e-mail sign-in link tokens, owned by Auth.js through its Sequelize adapter. */
export class VerificationToken extends Model<InferAttributes<VerificationToken>, InferCreationAttributes<VerificationToken>> {
  declare token: string;
  declare identifier: string;
  declare expires: Date;

  static initModel(sequelize: Sequelize) {
    VerificationToken.init(
      {
        token: { type: DataTypes.STRING(200), primaryKey: true },
        identifier: { type: DataTypes.STRING(320), allowNull: false },
        expires: { type: DataTypes.DATE, allowNull: false },
      },
      { sequelize, tableName: 'verification_tokens', modelName: 'verificationToken', underscored: true, timestamps: false },
    );
  }
}
