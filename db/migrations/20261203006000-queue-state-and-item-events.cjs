'use strict';

/**
 * The queue's state kept in our own tables, and item changes pushed to the web process.
 * - items.analyse_sent_at, items.render_sent_at: when the item's last analyse / render job was sent
 *   (after its row said it was wanted), so the worker finds work whose sending was cut short without
 *   reading pg-boss's tables.
 * - items.analysis_runs: how many times a worker took the item into analysis.
 * - item_changed: every change of an item's state, batch, removal, current correction or full-size
 *   render is announced on the `item_changed` channel (LISTEN/NOTIFY) when its transaction commits,
 *   whichever process made it; the web process fans it out to the browsers watching the batch
 *   (src/lib/server/item-events.ts).
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    await queryInterface.addColumn('items', 'analyse_sent_at', { type: DataTypes.DATE });
    await queryInterface.addColumn('items', 'render_sent_at', { type: DataTypes.DATE });
    await queryInterface.addColumn('items', 'analysis_runs', { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 });
    // what is queued now was sent by the code before this column
    await queryInterface.sequelize.query(`UPDATE items SET analyse_sent_at = updated_at WHERE state = 'queued'`);
    await queryInterface.sequelize.query('UPDATE items SET render_sent_at = render_queued_at WHERE render_queued_version IS NOT NULL');
    await queryInterface.sequelize.query(`
      CREATE FUNCTION announce_item_change() RETURNS trigger LANGUAGE plpgsql AS $$
      BEGIN
        IF TG_OP = 'UPDATE' AND NEW.state IS NOT DISTINCT FROM OLD.state AND NEW.batch_id IS NOT DISTINCT FROM OLD.batch_id
           AND NEW.deleted_at IS NOT DISTINCT FROM OLD.deleted_at AND NEW.current_version IS NOT DISTINCT FROM OLD.current_version
           AND NEW.render_version IS NOT DISTINCT FROM OLD.render_version THEN
          RETURN NULL;
        END IF;
        IF TG_OP = 'DELETE' OR (TG_OP = 'UPDATE' AND NEW.batch_id IS DISTINCT FROM OLD.batch_id) THEN
          PERFORM pg_notify('item_changed', json_build_object('a', OLD.archive_id, 'b', OLD.batch_id, 'i', OLD.id, 's', NULL)::text);
        END IF;
        IF TG_OP <> 'DELETE' THEN
          PERFORM pg_notify('item_changed', json_build_object('a', NEW.archive_id, 'b', NEW.batch_id, 'i', NEW.id, 's', NEW.state)::text);
        END IF;
        RETURN NULL;
      END $$`);
    await queryInterface.sequelize.query(`
      CREATE TRIGGER item_changed AFTER INSERT OR DELETE OR UPDATE OF state, batch_id, deleted_at, current_version, render_version
        ON items FOR EACH ROW EXECUTE FUNCTION announce_item_change()`);
  },

  async down(queryInterface) {
    await queryInterface.sequelize.query('DROP TRIGGER IF EXISTS item_changed ON items');
    await queryInterface.sequelize.query('DROP FUNCTION IF EXISTS announce_item_change()');
    await queryInterface.removeColumn('items', 'analysis_runs');
    await queryInterface.removeColumn('items', 'render_sent_at');
    await queryInterface.removeColumn('items', 'analyse_sent_at');
  },
};
