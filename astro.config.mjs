// @ts-check
import { defineConfig } from 'astro/config';
import node from '@astrojs/node';
import react from '@astrojs/react';
import tailwind from '@astrojs/tailwind';

/**
 * Hosts the server answers on. Astro ignores the Host header unless it is listed here,
 * and Auth.js builds its sign-in links from the request URL, so the public URL's host
 * (APP_URL, read at build time) joins the loopback names used by `npm start` and the tests.
 */
const allowedDomains = [{ hostname: '127.0.0.1' }, { hostname: 'localhost' }];
if (process.env.APP_URL) {
  const url = new URL(process.env.APP_URL);
  allowedDomains.push({ hostname: url.hostname, protocol: url.protocol.replace(':', ''), port: url.port || undefined });
}

export default defineConfig({
  output: 'server',
  // The app and the test run build side by side, so a running `npm start` survives `npm test`.
  outDir: process.env.DRAWERLIGHT_OUT_DIR ?? './dist/app',
  adapter: node({ mode: 'standalone' }),
  integrations: [react(), tailwind({ applyBaseStyles: false })],
  // The cross-site check is src/middleware.ts's: Astro's own refuses API-token calls that carry no
  // JSON content type, with a plain-text 403 instead of the API's error shape.
  security: { checkOrigin: false, allowedDomains },
  server: { host: '127.0.0.1' },
  vite: {
    // Page scripts stay files (allowed as 'self'): the content security policy allows no inline
    // script but Astro's island loader (src/lib/server/content-policy.ts).
    build: { assetsInlineLimit: 0 },
    ssr: { external: ['sharp', 'pg', 'pg-hstore', 'sequelize', 'pg-boss', 'nodemailer', 'pdfkit'] },
  },
});
