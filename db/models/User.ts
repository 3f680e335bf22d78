import { DataTypes, Model, type CreationOptional, type InferAttributes, type InferCreationAttributes, type Sequelize } from 'sequelize';

/** A person who signs in. Shape shared with the Auth.js adapter (id, name, email, emailVerified, image). */
export class User extends Model<InferAttributes<User>, InferCreationAttributes<User>> {
  declare id: CreationOptional<string>;
  declare email: string;
  declare name: string | null;
  declare passwordHash: CreationOptional<string | null>;
  declare emailVerified: CreationOptional<Date | null>;
  declare image: CreationOptional<string | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;

  static initModel(sequelize: Sequelize) {
    User.init(
      {
        id: { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 },
        email: { type: DataTypes.STRING(320), allowNull: false, unique: true },
        name: DataTypes.STRING(200),
        passwordHash: DataTypes.STRING(200),
        emailVerified: DataTypes.DATE,
        image: DataTypes.STRING(500),
        createdAt: DataTypes.DATE,
        updatedAt: DataTypes.DATE,
      },
      { sequelize, tableName: 'users', modelName: 'user', underscored: true },
    );
  }
}
