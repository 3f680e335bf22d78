'use strict';

/**
 * Batches (one sitting's scans from one box, drawer, album or envelope), originals
 * (content-addressed, write-once scans), items (one print), and correction versions.
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    const now = { type: DataTypes.DATE, allowNull: false, defaultValue: Sequelize.literal('now()') };
    const uuidPk = { type: DataTypes.UUID, primaryKey: true, defaultValue: Sequelize.literal('gen_random_uuid()') };
    const ref = (model, onDelete = 'CASCADE', allowNull = false) => ({
      type: DataTypes.UUID, allowNull, references: { model, key: 'id' }, onDelete,
    });

    await queryInterface.createTable('batches', {
      id: uuidPk,
      archive_id: ref('archives'),
      name: { type: DataTypes.STRING(200), allowNull: false },
      source_kind: { type: DataTypes.ENUM('box', 'drawer', 'album', 'envelope', 'other'), allowNull: false, defaultValue: 'box' },
      source_label: { type: DataTypes.STRING(200), allowNull: false, defaultValue: '' },
      date_from: { type: DataTypes.STRING(40) },
      date_to: { type: DataTypes.STRING(40) },
      notes: { type: DataTypes.TEXT, allowNull: false, defaultValue: '' },
      created_by: ref('users', 'SET NULL', true),
      finished_notified_at: { type: DataTypes.DATE },
      created_at: now,
      updated_at: now,
    });
    await queryInterface.addIndex('batches', ['archive_id', 'created_at']);
    await queryInterface.addIndex('batches', ['archive_id', 'name'], { unique: true });

    await queryInterface.createTable('originals', {
      id: uuidPk,
      archive_id: ref('archives'),
      sha256: { type: DataTypes.STRING(64), allowNull: false },
      storage_key: { type: DataTypes.STRING(300), allowNull: false },
      bytes: { type: DataTypes.BIGINT, allowNull: false },
      mime: { type: DataTypes.STRING(60), allowNull: false },
      width: { type: DataTypes.INTEGER },
      height: { type: DataTypes.INTEGER },
      exif: { type: DataTypes.JSONB, allowNull: false, defaultValue: {} },
      created_by: ref('users', 'SET NULL', true),
      created_at: now,
    });
    await queryInterface.addIndex('originals', ['archive_id', 'sha256'], { unique: true });

    await queryInterface.createTable('items', {
      id: uuidPk,
      archive_id: ref('archives'),
      batch_id: ref('batches'),
      original_id: ref('originals', 'RESTRICT'),
      seq: { type: DataTypes.INTEGER, allowNull: false },
      original_name: { type: DataTypes.STRING(300), allowNull: false },
      state: { type: DataTypes.ENUM('queued', 'analysing', 'ready', 'failed'), allowNull: false, defaultValue: 'queued' },
      failure_reason: { type: DataTypes.TEXT },
      analysis: { type: DataTypes.JSONB },
      fade_grade: { type: DataTypes.STRING(20) },
      current_version: { type: DataTypes.INTEGER },
      thumb_key: { type: DataTypes.STRING(300) },
      preview_key: { type: DataTypes.STRING(300) },
      render_key: { type: DataTypes.STRING(300) },
      render_version: { type: DataTypes.INTEGER },
      decision: { type: DataTypes.ENUM('accepted', 'accepted_adjusted', 'rescan', 'skipped') },
      decided_by: ref('users', 'SET NULL', true),
      decided_at: { type: DataTypes.DATE },
      negative_available: { type: DataTypes.ENUM('yes', 'no', 'unknown') },
      negative_location: { type: DataTypes.STRING(300) },
      rescan_note: { type: DataTypes.TEXT },
      lock_version: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      created_at: now,
      updated_at: now,
    });
    await queryInterface.addIndex('items', ['batch_id', 'seq'], { unique: true });
    await queryInterface.addIndex('items', ['batch_id', 'original_id'], { unique: true });
    await queryInterface.addIndex('items', ['archive_id', 'state']);
    await queryInterface.addIndex('items', ['archive_id', 'decision']);

    await queryInterface.createTable('corrections', {
      id: uuidPk,
      item_id: ref('items'),
      version: { type: DataTypes.INTEGER, allowNull: false },
      params: { type: DataTypes.JSONB, allowNull: false },
      origin: { type: DataTypes.ENUM('proposed', 'pooled', 'operator', 'restored'), allowNull: false },
      created_by: ref('users', 'SET NULL', true),
      created_at: now,
    });
    await queryInterface.addIndex('corrections', ['item_id', 'version'], { unique: true });
  },

  async down(queryInterface) {
    for (const t of ['corrections', 'items', 'originals', 'batches']) await queryInterface.dropTable(t);
    await queryInterface.sequelize.query(
      'DROP TYPE IF EXISTS "enum_batches_source_kind"; DROP TYPE IF EXISTS "enum_items_state"; DROP TYPE IF EXISTS "enum_items_decision"; DROP TYPE IF EXISTS "enum_items_negative_available"; DROP TYPE IF EXISTS "enum_corrections_origin";',
    );
  },
};
