'use strict';

/**
 * What an export is doing while it runs: packing the prints, or checking the written bag (every
 * file's checksum read back from the zip), with how many files of the bag are checked so far, so
 * the export page can say so instead of sitting at the last print.
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    await queryInterface.addColumn('exports', 'step', { type: DataTypes.STRING(20) });
    await queryInterface.addColumn('exports', 'check_done', { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 });
    await queryInterface.addColumn('exports', 'check_total', { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 });
  },

  async down(queryInterface) {
    await queryInterface.removeColumn('exports', 'check_total');
    await queryInterface.removeColumn('exports', 'check_done');
    await queryInterface.removeColumn('exports', 'step');
  },
};
