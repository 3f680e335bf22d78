import { randomBytes } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { z } from 'zod';

/**
 * The one place that reads process.env, for the web server, the worker and the scripts alike.
 * In production every secret must come from the environment; development and test get
 * local defaults so `npm start` and `npm test` work on a fresh machine.
 */
const envSchema = z.object({
  APP_ENV: z.enum(['development', 'test', 'production']).default('development'),
  APP_URL: z.string().url().default('http://127.0.0.1:4321'),
  DATABASE_URL: z.string().default('postgres://drawerlight@127.0.0.1:5544/drawerlight'),
  AUTH_SECRET: z.string().min(32).optional(),
  STORAGE_DIR: z.string().default(path.resolve(process.cwd(), 'storage')),
  SMTP_HOST: z.string().default('127.0.0.1'),
  SMTP_PORT: z.coerce.number().int().positive().default(2525),
  SMTP_USER: z.string().optional(),
  SMTP_PASS: z.string().optional(),
  SMTP_SECURE: z.enum(['true', 'false']).default('false'),
  MAIL_FROM: z.string().default('Drawerlight <no-reply@drawerlight.local>'),
  MAX_UPLOAD_MB: z.coerce.number().positive().default(300),
  MAX_MEGAPIXELS: z.coerce.number().positive().default(150),
  WORKER_CONCURRENCY: z.coerce.number().int().min(1).max(8).default(2),
  STALE_UPLOAD_MINUTES: z.coerce.number().positive().default(30),
  EXPORT_STALL_SECONDS: z.coerce.number().positive().default(600),
  SIGNIN_ATTEMPTS_PER_15_MIN: z.coerce.number().int().positive().default(10),
  TRUSTED_PROXIES: z.string().default(''),
});

/**
 * Development and test need a session secret without anyone setting one, but never one written in
 * the code (anyone could forge a session with it): a random one is made on first start and kept in
 * the storage folder, so every process of the install reads the same one.
 */
function localAuthSecret(storageDir: string): string {
  const file = path.join(storageDir, '.auth-secret');
  try {
    return fs.readFileSync(file, 'utf8').trim();
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code !== 'ENOENT') throw err;
  }
  fs.mkdirSync(storageDir, { recursive: true });
  // Written aside and linked into place, so a process starting at the same moment reads either
  // nothing (and links its own, which fails) or the whole secret, never half of it.
  const staged = `${file}.${process.pid}.${randomBytes(4).toString('hex')}`;
  fs.writeFileSync(staged, randomBytes(32).toString('base64url'), { mode: 0o600 });
  try {
    fs.linkSync(staged, file);
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code !== 'EEXIST') throw err;
  } finally {
    fs.rmSync(staged, { force: true });
  }
  return fs.readFileSync(file, 'utf8').trim();
}

export type AppConfig = ReturnType<typeof loadConfig>;

/** Parses the environment; throws a readable error naming every missing or bad setting. */
export function loadConfig(env: NodeJS.ProcessEnv = process.env) {
  const parsed = envSchema.safeParse(env);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join('.')}: ${i.message}`);
    throw new Error(`Drawerlight cannot start: bad settings in the environment\n${lines.join('\n')}`);
  }
  const e = parsed.data;
  const production = e.APP_ENV === 'production';
  if (production) {
    const missing = ['AUTH_SECRET', 'DATABASE_URL', 'APP_URL', 'SMTP_HOST'].filter((k) => !env[k]);
    if (missing.length) {
      throw new Error(`Drawerlight refuses to start in production without: ${missing.join(', ')}`);
    }
  }
  return {
    env: e.APP_ENV,
    production,
    /** Development and test run the local mail fake and show the Outbox page. */
    hasOutbox: !production,
    appUrl: e.APP_URL.replace(/\/$/, ''),
    databaseUrl: e.DATABASE_URL,
    authSecret: e.AUTH_SECRET ?? localAuthSecret(e.STORAGE_DIR),
    storageDir: e.STORAGE_DIR,
    smtp: {
      host: e.SMTP_HOST,
      port: e.SMTP_PORT,
      secure: e.SMTP_SECURE === 'true',
      auth: e.SMTP_USER ? { user: e.SMTP_USER, pass: e.SMTP_PASS ?? '' } : undefined,
    },
    mailFrom: e.MAIL_FROM,
    limits: {
      maxUploadBytes: Math.round(e.MAX_UPLOAD_MB * 1024 * 1024),
      maxPixels: Math.round(e.MAX_MEGAPIXELS * 1_000_000),
    },
    workerConcurrency: e.WORKER_CONCURRENCY,
    /** A staged or half-written file untouched this long belongs to a process that died (src/lib/server/stale-files.ts). */
    staleUploadMs: Math.round(e.STALE_UPLOAD_MINUTES * 60_000),
    /** A running export whose progress has not moved for this long lost its worker and is sent again. */
    exportStallMs: Math.round(e.EXPORT_STALL_SECONDS * 1000),
    signinAttemptsPer15Min: e.SIGNIN_ATTEMPTS_PER_15_MIN,
    /**
     * Addresses of reverse proxies whose X-Forwarded-For is believed (none by default: the client is
     * whoever opened the connection, so nobody picks their own address by sending the header).
     */
    trustedProxies: e.TRUSTED_PROXIES.split(',').map((a) => a.trim()).filter(Boolean),
  };
}

let cached: AppConfig | undefined;
/** The process-wide configuration, parsed once. */
export function config(): AppConfig {
  cached ??= loadConfig();
  return cached;
}
