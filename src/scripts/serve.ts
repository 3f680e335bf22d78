/**
 * `npm run serve`: the web server of a build, started only after the settings check out, so a
 * production start without its secrets refuses to run instead of failing on the first request.
 */
import type { IncomingMessage, Server, ServerResponse } from 'node:http';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { pinClientAddress } from '../lib/server/client-address.ts';
import { loadConfig } from '../lib/server/config.ts';
import { lingerAfterRefusals } from '../lib/server/refused-body.ts';

let trustedProxies: string[];
try {
  trustedProxies = loadConfig().trustedProxies;
} catch (err) {
  console.error((err as Error).message);
  process.exit(1);
}
// The adapter starts its server on import unless told not to; this one starts it itself so that it
// can set the client address (src/lib/server/client-address.ts) before Astro reads the request.
process.env.ASTRO_NODE_AUTOSTART = 'disabled';
// The build leaves React outside its bundle, and React picks its server renderer by NODE_ENV when
// first loaded: unset, every page is rendered by the development build (about 5 times slower: a
// batch page of 50 rows took 200 ms instead of 40). A built server is a production server.
process.env.NODE_ENV ??= 'production';
const outDir = process.env.DRAWERLIGHT_OUT_DIR ?? './dist/app';
const entry = (await import(pathToFileURL(path.resolve(outDir, 'server/entry.mjs')).href)) as { startServer(): { server: { server: Server } } };
const { server } = entry.startServer();
// The adapter answers an address that cannot be decoded with a plain-text 400 of its own; ours is
// in the API's error shape. Its handler runs after the client address is pinned.
const [astro] = server.server.listeners('request') as ((req: IncomingMessage, res: ServerResponse) => void)[];
server.server.removeAllListeners('request');
server.server.on('request', (req: IncomingMessage, res: ServerResponse) => {
  pinClientAddress(req, trustedProxies);
  try {
    decodeURI(req.url ?? '/');
  } catch {
    const body = JSON.stringify({ error: { code: 'invalid_input', message: 'The address holds %-escapes that do not decode.' } });
    res.writeHead(400, { 'content-type': 'application/json; charset=utf-8', 'x-content-type-options': 'nosniff', connection: 'close' }).end(body);
    return;
  }
  astro(req, res);
});
lingerAfterRefusals(server.server);
