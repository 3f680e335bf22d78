/** Throwaway databases that tests make beside the shared one, and their removal. */
import type pg from 'pg';

const quote = (name: string) => `"${name.replace(/"/g, '""')}"`;

/**
 * Drops a database a test made, whatever is connected to it. `DROP DATABASE … WITH (FORCE)` alone
 * failed one run in two: autovacuum can connect between the termination of the others and the drop
 * ("database is being accessed by other users"). Connections are refused first (autovacuum only
 * enters such a database against transaction-ID wraparound), and a drop that still meets one is
 * tried again.
 */
export async function dropDatabase(admin: pg.Client, name: string, timeoutMs = 30_000): Promise<void> {
  try {
    await admin.query(`ALTER DATABASE ${quote(name)} ALLOW_CONNECTIONS false`);
  } catch (err) {
    if ((err as { code?: string }).code === '3D000') return; // no such database: nothing to drop
    throw err;
  }
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    try {
      await admin.query(`DROP DATABASE IF EXISTS ${quote(name)} WITH (FORCE)`);
      return;
    } catch (err) {
      // 55006 object_in_use: something connected again between the termination and the drop
      if ((err as { code?: string }).code !== '55006' || Date.now() > deadline) throw err;
      await new Promise((r) => setTimeout(r, 100));
    }
  }
}
