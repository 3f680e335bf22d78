import { createRequire } from 'node:module';
import path from 'node:path';
import { Sequelize } from 'sequelize';
import { SequelizeStorage, Umzug } from 'umzug';

const require = createRequire(import.meta.url);

/**
 * The migrator over db/migrations/*.cjs (sequelize-cli's format, applied with umzug so the app,
 * the tests and `npm start` share one code path). The applied list lives in "SequelizeMeta",
 * the same table sequelize-cli uses.
 */
export function migrator(sequelize: Sequelize, root = process.cwd()) {
  return new Umzug({
    migrations: {
      glob: ['db/migrations/*.cjs', { cwd: root }],
      resolve: ({ name, path: file, context }) => {
        const m = require(path.resolve(root, file!)) as {
          up: (qi: unknown, S: typeof Sequelize) => Promise<void>;
          down: (qi: unknown, S: typeof Sequelize) => Promise<void>;
        };
        return { name, up: () => m.up(context, Sequelize), down: () => m.down(context, Sequelize) };
      },
    },
    context: sequelize.getQueryInterface(),
    storage: new SequelizeStorage({ sequelize }),
    logger: undefined,
  });
}
