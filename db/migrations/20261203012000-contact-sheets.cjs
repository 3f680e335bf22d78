'use strict';

/**
 * Contact sheets: a numbered list of prints printed on paper for a relative to write on, kept so
 * the answers are typed back against the same prints in the same order; suggestions typed from
 * one name the relative who wrote them (who may have no account) and the sheet they came on.
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    const now = { type: DataTypes.DATE, allowNull: false, defaultValue: Sequelize.literal('now()') };
    await queryInterface.createTable('contact_sheets', {
      id: { type: DataTypes.UUID, primaryKey: true, defaultValue: Sequelize.literal('gen_random_uuid()') },
      archive_id: { type: DataTypes.UUID, allowNull: false, references: { model: 'archives', key: 'id' }, onDelete: 'CASCADE' },
      batch_id: { type: DataTypes.UUID, allowNull: false, references: { model: 'batches', key: 'id' }, onDelete: 'CASCADE' },
      number: { type: DataTypes.INTEGER, allowNull: false },
      scope: { type: DataTypes.STRING(20), allowNull: false },
      paper: { type: DataTypes.STRING(10), allowNull: false },
      item_ids: { type: DataTypes.JSONB, allowNull: false },
      made_by: { type: DataTypes.UUID, references: { model: 'users', key: 'id' }, onDelete: 'SET NULL' },
      created_at: now,
      updated_at: now,
    });
    await queryInterface.addIndex('contact_sheets', ['archive_id', 'number'], { unique: true, name: 'contact_sheets_archive_number_unique' });
    await queryInterface.addIndex('contact_sheets', ['batch_id']);
    await queryInterface.addColumn('suggestions', 'relative_name', { type: DataTypes.STRING(200) });
    await queryInterface.addColumn('suggestions', 'contact_sheet_id', { type: DataTypes.UUID, references: { model: 'contact_sheets', key: 'id' }, onDelete: 'SET NULL' });
  },

  async down(queryInterface) {
    await queryInterface.removeColumn('suggestions', 'contact_sheet_id');
    await queryInterface.removeColumn('suggestions', 'relative_name');
    await queryInterface.dropTable('contact_sheets');
  },
};
