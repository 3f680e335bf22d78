'use strict';

/**
 * Full-size renders leave the path to "ready": an item is ready for review once its analysis and
 * small copies exist, and its full-resolution corrected JPEG is made afterwards, when no scan is
 * waiting for analysis (jobs/render.ts).
 * - preview_version: the correction version the stored small copies show (before, render_version).
 * - render_queued_version / render_queued_at: the newest version a render job was sent for, and when,
 *   so several workers feeding the render queue send one job per version, and a lost one is sent again.
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    await queryInterface.addColumn('items', 'preview_version', { type: DataTypes.INTEGER });
    await queryInterface.addColumn('items', 'render_queued_version', { type: DataTypes.INTEGER });
    await queryInterface.addColumn('items', 'render_queued_at', { type: DataTypes.DATE });
    await queryInterface.sequelize.query('UPDATE items SET preview_version = render_version, render_queued_version = render_version');
    // the feeder's two questions: is anything waiting for analysis, and which prints lack a render
    await queryInterface.sequelize.query("CREATE INDEX items_pending_analysis ON items (created_at) WHERE state IN ('queued', 'analysing')");
    await queryInterface.sequelize.query('CREATE INDEX items_render_wanted ON items (updated_at) WHERE current_version IS NOT NULL AND (render_version IS NULL OR render_version < current_version)');
    await queryInterface.addIndex('items', ['created_at']);
  },

  async down(queryInterface) {
    await queryInterface.removeIndex('items', ['created_at']);
    await queryInterface.sequelize.query('DROP INDEX IF EXISTS items_render_wanted');
    await queryInterface.sequelize.query('DROP INDEX IF EXISTS items_pending_analysis');
    await queryInterface.removeColumn('items', 'render_queued_at');
    await queryInterface.removeColumn('items', 'render_queued_version');
    await queryInterface.removeColumn('items', 'preview_version');
  },
};
