'use strict';

/** Exports of an archive as BagIt zips: what was chosen, progress, where the zip is kept, its check. */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    const now = { type: DataTypes.DATE, allowNull: false, defaultValue: Sequelize.literal('now()') };
    await queryInterface.createTable('exports', {
      id: { type: DataTypes.UUID, primaryKey: true, defaultValue: Sequelize.literal('gen_random_uuid()') },
      archive_id: { type: DataTypes.UUID, allowNull: false, references: { model: 'archives', key: 'id' }, onDelete: 'CASCADE' },
      requested_by: { type: DataTypes.UUID, references: { model: 'users', key: 'id' }, onDelete: 'SET NULL' },
      selection: { type: DataTypes.JSONB, allowNull: false },
      options: { type: DataTypes.JSONB, allowNull: false, defaultValue: {} },
      state: { type: DataTypes.ENUM('queued', 'running', 'ready', 'failed'), allowNull: false, defaultValue: 'queued' },
      item_ids: { type: DataTypes.JSONB, allowNull: false, defaultValue: [] },
      progress_done: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      progress_total: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      zip_key: { type: DataTypes.STRING(300) },
      zip_bytes: { type: DataTypes.BIGINT },
      zip_sha256: { type: DataTypes.STRING(64) },
      verified_at: { type: DataTypes.DATE },
      failure_reason: { type: DataTypes.TEXT },
      started_at: { type: DataTypes.DATE },
      finished_at: { type: DataTypes.DATE },
      created_at: now,
      updated_at: now,
    });
    await queryInterface.addIndex('exports', ['archive_id', 'created_at']);
  },

  async down(queryInterface) {
    await queryInterface.dropTable('exports');
    await queryInterface.sequelize.query('DROP TYPE IF EXISTS "enum_exports_state";');
  },
};
