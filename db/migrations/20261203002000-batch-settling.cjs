'use strict';

/**
 * When a batch is really finished (the "batch finished" e-mail goes out once, with every scan counted).
 * - batches.last_upload_at: set by every upload request, refused or not, as it starts and as it ends,
 *   so a batch whose uploads are still coming in (a slow file, a client retrying after a dropped
 *   connection) is not taken as quiet because no item was added lately.
 * - items.analysing_by: the worker holding an item in analysis (the id its presence connection carries
 *   in application_name), so a worker that starts can tell the analyses a dead worker left half done
 *   from those a live one is running, and queue those again at once.
 * - items.interruptions: how often an analysis was cut short that way; a scan that keeps taking its
 *   worker down is marked failed instead of being queued for ever.
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    await queryInterface.addColumn('batches', 'last_upload_at', { type: DataTypes.DATE });
    await queryInterface.addColumn('items', 'analysing_by', { type: DataTypes.STRING(64) });
    await queryInterface.addColumn('items', 'interruptions', { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 });
  },

  async down(queryInterface) {
    await queryInterface.removeColumn('items', 'interruptions');
    await queryInterface.removeColumn('items', 'analysing_by');
    await queryInterface.removeColumn('batches', 'last_upload_at');
  },
};
