'use strict';

/**
 * - signin_failures: the sign-in limiter's counters (rate-limiter-flexible's PostgreSQL store, in the
 *   shape it expects: key, points, expire in epoch milliseconds), so every web process counts the
 *   same failed attempts and a restart forgets none.
 * - revoked_sessions: sessions ended by signing out. Sessions are signed cookies, valid until they
 *   expire wherever a copy is; each carries an id, and an id listed here is refused (until its expiry,
 *   after which the cookie is refused anyway and the row can go).
 */
module.exports = {
  async up(queryInterface, Sequelize) {
    const { DataTypes } = Sequelize;
    await queryInterface.createTable('signin_failures', {
      key: { type: DataTypes.STRING(255), primaryKey: true },
      points: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      expire: { type: DataTypes.BIGINT },
    });
    await queryInterface.createTable('revoked_sessions', {
      session_id: { type: DataTypes.UUID, primaryKey: true },
      expires_at: { type: DataTypes.DATE, allowNull: false },
    });
    await queryInterface.addIndex('revoked_sessions', ['expires_at']);
  },

  async down(queryInterface) {
    await queryInterface.dropTable('revoked_sessions');
    await queryInterface.dropTable('signin_failures');
  },
};
