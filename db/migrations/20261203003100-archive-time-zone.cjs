'use strict';

/** The time zone an archive's dates and times are shown in (an IANA name such as Europe/Dublin). */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    await queryInterface.addColumn('archives', 'time_zone', { type: DataTypes.STRING(64), allowNull: false, defaultValue: 'UTC' });
  },

  async down(queryInterface) {
    await queryInterface.removeColumn('archives', 'time_zone');
  },
};
