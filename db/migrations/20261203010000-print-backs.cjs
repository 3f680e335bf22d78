'use strict';

/**
 * The backs of prints: a scan recognised as the back of a print (bare paper with a lab's imprint, a
 * stamp or handwriting) stops being a print of its own and is kept here, its original scan still
 * an original like any other, paired with the print it is the back of (by file name, by feed order
 * or by hand). The text read from it waits as a suggestion; suggestions gain the back's text.
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    const now = { type: DataTypes.DATE, allowNull: false, defaultValue: Sequelize.literal('now()') };
    const ref = (model, onDelete, allowNull = false) => ({ type: DataTypes.UUID, allowNull, references: { model, key: 'id' }, onDelete });
    await queryInterface.createTable('print_backs', {
      id: { type: DataTypes.UUID, primaryKey: true, defaultValue: Sequelize.literal('gen_random_uuid()') },
      archive_id: ref('archives', 'CASCADE'),
      batch_id: ref('batches', 'CASCADE'),
      // an original goes only through the purge, which takes the back's row first
      original_id: ref('originals', 'RESTRICT'),
      original_name: { type: DataTypes.STRING(300), allowNull: false },
      upload_key: { type: DataTypes.STRING(64) },
      front_item_id: ref('items', 'SET NULL', true),
      // 'name', 'feed order', 'hand'; 'apart' when the archivist unpaired it (never paired again on its own)
      paired_by: { type: DataTypes.STRING(20) },
      measure: { type: DataTypes.JSONB },
      thumb_key: { type: DataTypes.STRING(300) },
      preview_key: { type: DataTypes.STRING(300) },
      back_text: { type: DataTypes.TEXT },
      text_read_at: { type: DataTypes.DATE },
      created_at: now,
      updated_at: now,
    });
    await queryInterface.addIndex('print_backs', ['archive_id', 'original_id'], { unique: true });
    await queryInterface.addIndex('print_backs', ['front_item_id'], { unique: true });
    await queryInterface.addIndex('print_backs', ['batch_id']);
    await queryInterface.addColumn('suggestions', 'back_text', { type: DataTypes.TEXT });
    await queryInterface.addColumn('suggestions', 'print_back_id', ref('print_backs', 'CASCADE', true));
  },

  async down(queryInterface) {
    await queryInterface.removeColumn('suggestions', 'print_back_id');
    await queryInterface.removeColumn('suggestions', 'back_text');
    await queryInterface.dropTable('print_backs');
  },
};
