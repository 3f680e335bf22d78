// Settings for sequelize-cli (generating migrations); the app reads DATABASE_URL through src/lib/server/config.ts.
const url = process.env.DATABASE_URL || 'postgres://drawerlight@127.0.0.1:5544/drawerlight';
module.exports = {
  development: { url, dialect: 'postgres' },
  test: { url, dialect: 'postgres' },
  production: { url, dialect: 'postgres' },
};
