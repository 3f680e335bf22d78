'use strict';

/**
 * Prints that are the same picture.
 * - items.fingerprint: the picture fingerprint of the print's current scan (src/lib/images/fingerprint.ts),
 *   128 bits, written by the analysis. A bit string, so the distance of two is
 *   bit_count(a # b) in one expression; a partial index on the archive that carries it lets the
 *   look-up across an archive read the index alone.
 * - batches.holds_rescans: the batch was uploaded as rescans from the negatives, so its scans are
 *   looked for among the prints set aside for a rescan.
 * - same_pictures: a pair of prints whose fingerprints are near, proposed by the analysis, and what
 *   the editor decided (kept both, kept one, linked as the same picture, or the rescan used as the
 *   print's scan). One row a pair, in either order; a decided pair is not proposed again.
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    await queryInterface.sequelize.query('ALTER TABLE items ADD COLUMN fingerprint bit(128)');
    await queryInterface.sequelize.query(
      'CREATE INDEX items_fingerprint_by_archive ON items (archive_id) INCLUDE (fingerprint, id) WHERE fingerprint IS NOT NULL AND deleted_at IS NULL',
    );
    await queryInterface.addColumn('batches', 'holds_rescans', { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false });

    const ref = (model, onDelete = 'CASCADE', allowNull = false) => ({ type: DataTypes.UUID, allowNull, references: { model, key: 'id' }, onDelete });
    await queryInterface.createTable('same_pictures', {
      id: { type: DataTypes.UUID, primaryKey: true, defaultValue: Sequelize.literal('gen_random_uuid()') },
      archive_id: ref('archives'),
      // the print that came first, and the one whose analysis found it
      first_item_id: ref('items'),
      second_item_id: ref('items'),
      distance: { type: DataTypes.SMALLINT, allowNull: false },
      outcome: { type: DataTypes.ENUM('open', 'kept_both', 'kept_one', 'linked', 'rescan_used'), allowNull: false, defaultValue: 'open' },
      kept_item_id: { type: DataTypes.UUID },
      decided_by: ref('users', 'SET NULL', true),
      decided_at: { type: DataTypes.DATE },
      created_at: { type: DataTypes.DATE, allowNull: false, defaultValue: Sequelize.literal('now()') },
    });
    await queryInterface.sequelize.query(
      'CREATE UNIQUE INDEX same_pictures_pair ON same_pictures (LEAST(first_item_id, second_item_id), GREATEST(first_item_id, second_item_id))',
    );
    await queryInterface.addIndex('same_pictures', ['first_item_id']);
    await queryInterface.addIndex('same_pictures', ['second_item_id']);
    await queryInterface.sequelize.query('ALTER TABLE same_pictures ADD CONSTRAINT same_pictures_two_prints CHECK (first_item_id <> second_item_id)');
  },

  async down(queryInterface) {
    await queryInterface.dropTable('same_pictures');
    await queryInterface.sequelize.query('DROP TYPE IF EXISTS "enum_same_pictures_outcome"');
    await queryInterface.removeColumn('batches', 'holds_rescans');
    await queryInterface.sequelize.query('DROP INDEX IF EXISTS items_fingerprint_by_archive');
    await queryInterface.removeColumn('items', 'fingerprint');
  },
};
