/**
 * `npm run serve`: the web server of a build, started only after the settings check out, so a
 * production start without its secrets refuses to run instead of failing on the first request.
 */
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { loadConfig } from '../lib/server/config.ts';

try {
  loadConfig();
} catch (err) {
  console.error((err as Error).message);
  process.exit(1);
}
const outDir = process.env.DRAWERLIGHT_OUT_DIR ?? './dist/app';
await import(pathToFileURL(path.resolve(outDir, 'server/entry.mjs')).href);
