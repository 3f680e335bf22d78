/** `npm run token -- --email <user> --name <label>`: prints a new personal API token for an existing user. */
import { parseArgs } from 'node:util';
import { closeDb, User } from '../../db/index.ts';
import { openDatabase } from '../lib/server/database.ts';
import { createApiToken } from '../lib/server/api-tokens.ts';
import { recordAudit } from '../lib/server/audit.ts';

const { values } = parseArgs({ options: { email: { type: 'string' }, name: { type: 'string' } } });
openDatabase();
try {
  if (!values.email || !values.name) {
    console.error('usage: npm run token -- --email <user> --name <label>');
    process.exitCode = 2;
  } else {
    const user = await User.findOne({ where: { email: values.email.trim().toLowerCase() } });
    if (!user) {
      console.error(`no user with the e-mail ${values.email}`);
      process.exitCode = 1;
    } else {
      const { token, record } = await createApiToken(user.id, values.name);
      await recordAudit({ archiveId: null, actorId: user.id, action: 'token.create', subjectType: 'api_token', subjectId: record.id, details: { name: record.name, via: 'command line' } });
      console.log(token);
    }
  }
} finally {
  await closeDb();
}
