'use strict';

/**
 * Captions, dates (EDTF), places, the text on the back of the print and its envelope on items;
 * the first print scan kept when a rescan from the negative becomes the current original;
 * people (tags reused across an archive) and the viewers' suggestions awaiting an editor.
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    const now = { type: DataTypes.DATE, allowNull: false, defaultValue: Sequelize.literal('now()') };
    const uuidPk = { type: DataTypes.UUID, primaryKey: true, defaultValue: Sequelize.literal('gen_random_uuid()') };
    const ref = (model, onDelete = 'CASCADE', allowNull = false) => ({
      type: DataTypes.UUID, allowNull, references: { model, key: 'id' }, onDelete,
    });

    await queryInterface.addColumn('items', 'caption', { type: DataTypes.TEXT });
    await queryInterface.addColumn('items', 'date_edtf', { type: DataTypes.STRING(100) });
    await queryInterface.addColumn('items', 'place', { type: DataTypes.STRING(300) });
    await queryInterface.addColumn('items', 'back_text', { type: DataTypes.TEXT });
    await queryInterface.addColumn('items', 'envelope', { type: DataTypes.STRING(300) });
    await queryInterface.addColumn('items', 'print_original_id', ref('originals', 'RESTRICT', true));
    await queryInterface.addColumn('items', 'metadata_updated_at', { type: DataTypes.DATE });

    await queryInterface.createTable('people', {
      id: uuidPk,
      archive_id: ref('archives'),
      name: { type: DataTypes.STRING(200), allowNull: false },
      created_by: ref('users', 'SET NULL', true),
      created_at: now,
    });
    // One tag per name in an archive, whatever the letter case it was typed in.
    await queryInterface.sequelize.query('CREATE UNIQUE INDEX people_archive_name_unique ON people (archive_id, lower(name))');

    await queryInterface.createTable('item_people', {
      item_id: { ...ref('items'), primaryKey: true },
      person_id: { ...ref('people'), primaryKey: true },
      position: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
    });
    await queryInterface.addIndex('item_people', ['person_id']);

    await queryInterface.createTable('suggestions', {
      id: uuidPk,
      archive_id: ref('archives'),
      item_id: ref('items'),
      suggested_by: ref('users', 'SET NULL', true),
      caption: { type: DataTypes.TEXT },
      date_edtf: { type: DataTypes.STRING(100) },
      place: { type: DataTypes.STRING(300) },
      people: { type: DataTypes.JSONB },
      note: { type: DataTypes.TEXT },
      state: { type: DataTypes.ENUM('pending', 'accepted', 'declined'), allowNull: false, defaultValue: 'pending' },
      decided_by: ref('users', 'SET NULL', true),
      decided_at: { type: DataTypes.DATE },
      created_at: now,
      updated_at: now,
    });
    await queryInterface.addIndex('suggestions', ['item_id', 'state']);
    await queryInterface.addIndex('suggestions', ['archive_id', 'state']);
  },

  async down(queryInterface) {
    await queryInterface.dropTable('suggestions');
    await queryInterface.dropTable('item_people');
    await queryInterface.dropTable('people');
    for (const c of ['metadata_updated_at', 'print_original_id', 'envelope', 'back_text', 'place', 'date_edtf', 'caption']) {
      await queryInterface.removeColumn('items', c);
    }
    await queryInterface.sequelize.query('DROP TYPE IF EXISTS "enum_suggestions_state";');
  },
};
