'use strict';

/** Users, archives, memberships, invitations, API tokens, the audit log, and Auth.js verification tokens. */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    const now = { type: DataTypes.DATE, allowNull: false, defaultValue: Sequelize.literal('now()') };
    const uuidPk = { type: DataTypes.UUID, primaryKey: true, defaultValue: Sequelize.literal('gen_random_uuid()') };

    await queryInterface.createTable('users', {
      id: uuidPk,
      email: { type: DataTypes.STRING(320), allowNull: false, unique: true },
      name: { type: DataTypes.STRING(200) },
      password_hash: { type: DataTypes.STRING(200) },
      email_verified: { type: DataTypes.DATE },
      image: { type: DataTypes.STRING(500) },
      created_at: now,
      updated_at: now,
    });

    await queryInterface.createTable('archives', {
      id: uuidPk,
      slug: { type: DataTypes.STRING(80), allowNull: false, unique: true },
      name: { type: DataTypes.STRING(200), allowNull: false },
      description: { type: DataTypes.TEXT },
      created_at: now,
      updated_at: now,
    });

    await queryInterface.createTable('memberships', {
      id: uuidPk,
      archive_id: { type: DataTypes.UUID, allowNull: false, references: { model: 'archives', key: 'id' }, onDelete: 'CASCADE' },
      user_id: { type: DataTypes.UUID, allowNull: false, references: { model: 'users', key: 'id' }, onDelete: 'CASCADE' },
      role: { type: DataTypes.ENUM('owner', 'editor', 'viewer'), allowNull: false },
      created_at: now,
      updated_at: now,
    });
    await queryInterface.addIndex('memberships', ['archive_id', 'user_id'], { unique: true });
    await queryInterface.addIndex('memberships', ['user_id']);

    await queryInterface.createTable('invitations', {
      id: uuidPk,
      archive_id: { type: DataTypes.UUID, allowNull: false, references: { model: 'archives', key: 'id' }, onDelete: 'CASCADE' },
      email: { type: DataTypes.STRING(320), allowNull: false },
      role: { type: DataTypes.ENUM('owner', 'editor', 'viewer'), allowNull: false },
      token_hash: { type: DataTypes.STRING(64), allowNull: false, unique: true },
      invited_by: { type: DataTypes.UUID, references: { model: 'users', key: 'id' }, onDelete: 'SET NULL' },
      expires_at: { type: DataTypes.DATE, allowNull: false },
      accepted_at: { type: DataTypes.DATE },
      revoked_at: { type: DataTypes.DATE },
      created_at: now,
      updated_at: now,
    });
    await queryInterface.addIndex('invitations', ['archive_id']);

    await queryInterface.createTable('api_tokens', {
      id: uuidPk,
      user_id: { type: DataTypes.UUID, allowNull: false, references: { model: 'users', key: 'id' }, onDelete: 'CASCADE' },
      name: { type: DataTypes.STRING(120), allowNull: false },
      token_hash: { type: DataTypes.STRING(64), allowNull: false, unique: true },
      prefix: { type: DataTypes.STRING(16), allowNull: false },
      last_used_at: { type: DataTypes.DATE },
      revoked_at: { type: DataTypes.DATE },
      created_at: now,
      updated_at: now,
    });
    await queryInterface.addIndex('api_tokens', ['user_id']);

    await queryInterface.createTable('audit_events', {
      id: { type: DataTypes.BIGINT, primaryKey: true, autoIncrement: true },
      archive_id: { type: DataTypes.UUID, references: { model: 'archives', key: 'id' }, onDelete: 'CASCADE' },
      actor_id: { type: DataTypes.UUID, references: { model: 'users', key: 'id' }, onDelete: 'SET NULL' },
      action: { type: DataTypes.STRING(80), allowNull: false },
      subject_type: { type: DataTypes.STRING(40), allowNull: false },
      subject_id: { type: DataTypes.STRING(80) },
      details: { type: DataTypes.JSONB, allowNull: false, defaultValue: {} },
      request_id: { type: DataTypes.STRING(40) },
      created_at: now,
    });
    await queryInterface.addIndex('audit_events', ['archive_id', 'created_at']);

    await queryInterface.createTable('verification_tokens', {
      token: { type: DataTypes.STRING(200), primaryKey: true },
      identifier: { type: DataTypes.STRING(320), allowNull: false },
      expires: { type: DataTypes.DATE, allowNull: false },
    });
  },

  async down(queryInterface) {
    for (const t of ['verification_tokens', 'audit_events', 'api_tokens', 'invitations', 'memberships', 'archives', 'users']) {
      await queryInterface.dropTable(t);
    }
    await queryInterface.sequelize.query('DROP TYPE IF EXISTS "enum_memberships_role"; DROP TYPE IF EXISTS "enum_invitations_role";');
  },
};
