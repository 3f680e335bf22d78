import { Sequelize } from 'sequelize';
import pg from 'pg';
import { config } from '../src/lib/server/config.ts';
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

export { User, Archive, Membership, Invitation, ApiToken, AuditEvent, VerificationToken, Batch, Original, Item, Correction };
export { Person, ItemPerson, Suggestion, ArchiveExport };

/** Every model, in the order they are initialised. New models join this list. */
const MODELS = [User, Archive, Membership, Invitation, ApiToken, AuditEvent, VerificationToken, Batch, Original, Item, Correction, Person, ItemPerson, Suggestion, ArchiveExport];

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
}

let instance: Sequelize | undefined;

/** The process-wide Sequelize connection with every model initialised. */
export function db(): Sequelize {
  if (!instance) {
    instance = new Sequelize(config().databaseUrl, {
      dialect: 'postgres',
      dialectModule: pg,
      logging: false,
      pool: { max: 10, min: 0, idle: 10_000, acquire: 30_000 },
      retry: { max: 5, match: [/ECONNREFUSED/, /ECONNRESET/, /the database system is (starting up|shutting down)/, /terminating connection/] },
    });
    for (const m of MODELS) m.initModel(instance);
    associate();
  }
  return instance;
}

/** Closes the connection pool (scripts and tests call this before exiting). */
export async function closeDb(): Promise<void> {
  if (instance) {
    await instance.close();
    instance = undefined;
  }
}

// Models are usable as soon as this module is imported (the connection opens on the first query).
db();
