import { createHash } from 'node:crypto';
import islandLoader from 'astro/runtime/server/astro-island.prebuilt.js';
import islandLoaderDev from 'astro/runtime/server/astro-island.prebuilt-dev.js';
import onIdle from 'astro/runtime/client/idle.prebuilt.js';
import onLoad from 'astro/runtime/client/load.prebuilt.js';
import onMedia from 'astro/runtime/client/media.prebuilt.js';
import onlyClient from 'astro/runtime/client/only.prebuilt.js';
import onVisible from 'astro/runtime/client/visible.prebuilt.js';

/**
 * The only inline scripts our pages have are Astro's island loader and its hydration directives,
 * bundled into the server at build time (our own page scripts are files, see astro.config.mjs). The
 * policy allows exactly those by hash and is the same for every response: it is never worked out
 * from a rendered page, so a script that found its way into a page (a caption rendered raw by some
 * future mistake) has no hash here and the browser refuses it.
 */
export const BUILD_INLINE_SCRIPTS: readonly string[] = [islandLoader, islandLoaderDev, onIdle, onLoad, onMedia, onlyClient, onVisible];

const scriptHashes = BUILD_INLINE_SCRIPTS.map((s) => `'sha256-${createHash('sha256').update(s, 'utf8').digest('base64')}'`);

/** Styles keep 'unsafe-inline' for the style attributes React renders. */
export const CONTENT_SECURITY_POLICY = [
  "default-src 'self'",
  `script-src 'self' ${scriptHashes.join(' ')}`,
  "style-src 'self' 'unsafe-inline'",
  "img-src 'self' data: blob:",
  "font-src 'self'",
  "connect-src 'self'",
  "object-src 'none'",
  "base-uri 'self'",
  "form-action 'self'",
  "frame-ancestors 'none'",
].join('; ');
