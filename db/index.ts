import { Sequelize } from 'sequelize';
import pg from 'pg';
import { User } from './models/User.ts';
import { Archive } from './models/Archive.ts';
import { Membership } from './models/Membership.ts';
import { Invitation } from './models/Invitation.ts';
import { ApiToken } from './models/ApiToken.ts';
import { AuditEvent } from './models/AuditEvent.ts';
import { VerificationToken } from './models/VerificationToken.ts';
import { Batch } from './models/Batch.ts';
import { Original } from './models/Original.ts';
import { Item } from './models/Item.ts';
import { Correction } from './models/Correction.ts';
import { Person } from './models/Person.ts';
import { ItemPerson } from './models/ItemPerson.ts';
import { Suggestion } from './models/Suggestion.ts';
import { ArchiveExport } from './models/ArchiveExport.ts';
import { PrintBack } from './models/PrintBack.ts';
import { ContactSheet } from './models/ContactSheet.ts';

export { User, Archive, Membership, Invitation, ApiToken, AuditEvent, VerificationToken, Batch, Original, Item, Correction };
export { Person, ItemPerson, Suggestion, ArchiveExport, PrintBack };
export { ContactSheet };

/** Every model, in the order they are initialised. New models join this list. */
const MODELS = [User, Archive, Membership, Invitation, ApiToken, AuditEvent, VerificationToken, Batch, Original, Item, Correction, Person, ItemPerson, Suggestion, ArchiveExport, PrintBack, ContactSheet];

function associate() {
  Membership.belongsTo(User, { foreignKey: 'userId', as: 'user' });
  Membership.belongsTo(Archive, { foreignKey: 'archiveId', as: 'archive' });
  User.hasMany(Membership, { foreignKey: 'userId', as: 'memberships' });
  Archive.hasMany(Membership, { foreignKey: 'archiveId', as: 'memberships' });
  Invitation.belongsTo(Archive, { foreignKey: 'archiveId', as: 'archive' });
  ApiToken.belongsTo(User, { foreignKey: 'userId', as: 'user' });
  Batch.belongsTo(Archive, { foreignKey: 'archiveId', as: 'archive' });
  Batch.hasMany(Item, { foreignKey: 'batchId', as: 'items' });
  Item.belongsTo(Batch, { foreignKey: 'batchId', as: 'batch' });
  Item.belongsTo(Original, { foreignKey: 'originalId', as: 'original' });
  Item.hasMany(Correction, { foreignKey: 'itemId', as: 'corrections' });
  Correction.belongsTo(Item, { foreignKey: 'itemId', as: 'item' });
  Item.belongsTo(Original, { foreignKey: 'printOriginalId', as: 'printOriginal' });
  Item.belongsToMany(Person, { through: ItemPerson, foreignKey: 'itemId', otherKey: 'personId', as: 'people' });
  Person.belongsToMany(Item, { through: ItemPerson, foreignKey: 'personId', otherKey: 'itemId', as: 'items' });
  Item.hasMany(Suggestion, { foreignKey: 'itemId', as: 'suggestions' });
  Suggestion.belongsTo(Item, { foreignKey: 'itemId', as: 'item' });
  Suggestion.belongsTo(User, { foreignKey: 'suggestedBy', as: 'suggester' });
  PrintBack.belongsTo(Item, { foreignKey: 'frontItemId', as: 'front' });
  PrintBack.belongsTo(Original, { foreignKey: 'originalId', as: 'original' });
}

/** What the connection needs to know; the web server, the worker and the scripts pass their own (src/lib/server/database.ts). */
export interface DbSettings {
  /** A postgres:// URL. */
  url: string;
  /** Connections this process may hold at once. */
  poolMax?: number;
}

let instance: Sequelize | undefined;
let given: DbSettings | undefined;

function connect(settings: DbSettings): Sequelize {
  const sequelize = new Sequelize(settings.url, {
    dialect: 'postgres',
    dialectModule: pg,
    logging: false,
    pool: { max: settings.poolMax ?? 10, min: 0, idle: 10_000, acquire: 30_000 },
    retry: { max: 5, match: [/ECONNREFUSED/, /ECONNRESET/, /the database system is (starting up|shutting down)/, /terminating connection/] },
  });
  for (const m of MODELS) m.initModel(sequelize);
  associate();
  return sequelize;
}

/**
 * Opens the process-wide Sequelize connection with every model initialised (no query is made
 * yet). Each process calls it once before its first query; calling it again with the same
 * settings returns the same connection, with others once it is closed.
 */
export function openDb(settings: DbSettings): Sequelize {
  if (instance && JSON.stringify(given) !== JSON.stringify(settings)) throw new Error('The database is open with other settings: close it first (closeDb).');
  given = settings;
  instance ??= connect(settings);
  return instance;
}

/** The process-wide Sequelize connection, opened by {@link openDb} (and opened again with its settings after {@link closeDb}). */
export function db(): Sequelize {
  if (!given) throw new Error('The database is not open: this process must call openDb (src/lib/server/database.ts: openDatabase) before its first query.');
  instance ??= connect(given);
  return instance;
}

/** Closes the connection pool (scripts and tests call this before exiting). */
export async function closeDb(): Promise<void> {
  if (instance) {
    await instance.close();
    instance = undefined;
  }
}
