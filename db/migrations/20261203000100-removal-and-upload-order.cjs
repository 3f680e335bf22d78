'use strict';

/**
 * Removing prints and batches, and numbering prints by file name within an upload.
 * - deleted_at on batches and items: a removal is a soft delete (the models are paranoid); the
 *   rows and the original scans stay 30 days, so a removal can be undone, then the purge job
 *   deletes rows and files (jobs/purge-removed.ts).
 * - the unique indexes on a batch's names, numbers and originals hold among what is not removed,
 *   so a removed print's scan can be uploaded again and a removed batch's name used again.
 * - upload_key: which upload (one drop of files in the upload page) brought a print in; the
 *   prints of one upload are numbered in the natural order of their file names.
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    await queryInterface.addColumn('batches', 'deleted_at', { type: DataTypes.DATE });
    await queryInterface.addColumn('items', 'deleted_at', { type: DataTypes.DATE });
    await queryInterface.addColumn('items', 'upload_key', { type: DataTypes.STRING(64) });
    await queryInterface.removeIndex('batches', ['archive_id', 'name']);
    await queryInterface.removeIndex('items', ['batch_id', 'seq']);
    await queryInterface.removeIndex('items', ['batch_id', 'original_id']);
    await queryInterface.sequelize.query('CREATE UNIQUE INDEX batches_archive_id_name ON batches (archive_id, name) WHERE deleted_at IS NULL');
    await queryInterface.sequelize.query('CREATE UNIQUE INDEX items_batch_id_seq ON items (batch_id, seq) WHERE deleted_at IS NULL');
    await queryInterface.sequelize.query('CREATE UNIQUE INDEX items_batch_id_original_id ON items (batch_id, original_id) WHERE deleted_at IS NULL');
    await queryInterface.sequelize.query('CREATE INDEX items_removed ON items (deleted_at) WHERE deleted_at IS NOT NULL');
    await queryInterface.sequelize.query('CREATE INDEX batches_removed ON batches (deleted_at) WHERE deleted_at IS NOT NULL');
    await queryInterface.sequelize.query('CREATE INDEX items_upload_key ON items (batch_id, upload_key) WHERE upload_key IS NOT NULL');
  },

  async down(queryInterface) {
    // removed rows would break the full unique indexes: they go, as the purge would have taken them
    await queryInterface.sequelize.query('DELETE FROM items WHERE deleted_at IS NOT NULL');
    await queryInterface.sequelize.query('DELETE FROM batches WHERE deleted_at IS NOT NULL');
    for (const name of ['items_upload_key', 'batches_removed', 'items_removed', 'items_batch_id_original_id', 'items_batch_id_seq', 'batches_archive_id_name']) {
      await queryInterface.sequelize.query(`DROP INDEX IF EXISTS ${name}`);
    }
    await queryInterface.addIndex('items', ['batch_id', 'original_id'], { unique: true });
    await queryInterface.addIndex('items', ['batch_id', 'seq'], { unique: true });
    await queryInterface.addIndex('batches', ['archive_id', 'name'], { unique: true });
    await queryInterface.removeColumn('items', 'upload_key');
    await queryInterface.removeColumn('items', 'deleted_at');
    await queryInterface.removeColumn('batches', 'deleted_at');
  },
};
