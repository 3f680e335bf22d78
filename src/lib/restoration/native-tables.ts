/**
 * Applying a correction's per-channel tables to full-resolution 8-bit RGB, natively, on the server.
 *
 * The tables themselves always come from {@link buildChannelLuts} (correction.ts), and
 * {@link applyCorrection} stays the one implementation of what they mean: the browser, the small
 * copies and every other depth or layout use it, and it is the reference this is tested against
 * byte for byte (tests/unit/restoration/native-tables.test.ts). What is native is only the
 * mechanical step of looking each byte up in its channel's table, the job libvips' `maplut` does
 * and sharp does not expose. In JavaScript that step costs 17-20 ms per 3600 x 2400 scan, the
 * largest share of the command line's own work on its main thread; compiled C does it in about
 * 6.5 ms, by the same method (pair tables, see correction.ts), both measured alone; within a run
 * of the command line both take longer, libvips decoding on the other core sharing the memory.
 *
 * The C source is kept here, compiled once per machine with the system's C compiler and Node's own
 * headers (Debian's nodejs ships them in /usr/include/node) into node_modules/.cache, and loaded as
 * a Node-API addon (stable across Node versions). Where there is no compiler or no headers, or
 * anything else fails, {@link nativeTables} answers null and the caller uses applyCorrection:
 * the result is the same, only slower. {@link nativeTablesStatus} says which and why.
 */
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { threadId } from 'node:worker_threads';
import type { ChannelLuts } from './correction';

const SOURCE = String.raw`
/* Drawerlight: per-channel tables applied to interleaved 8-bit RGB (see native-tables.ts). */
#include <node_api.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

static int bytes_of(napi_env env, napi_value v, uint8_t **data, size_t *length) {
  bool is = false;
  napi_typedarray_type type;
  napi_value buffer;
  size_t offset;
  if (napi_is_typedarray(env, v, &is) != napi_ok || !is) return 0;
  if (napi_get_typedarray_info(env, v, &type, length, (void **)data, &buffer, &offset) != napi_ok) return 0;
  return type == napi_uint8_array || type == napi_uint8_clamped_array;
}

/* Below this many bytes, building the pair tables costs more than they save. */
#define PAIRS_FROM (1u << 20)

/* applyRgb8(source, destination, red, green, blue): destination may be source itself. */
static napi_value apply_rgb8(napi_env env, napi_callback_info info) {
  size_t argc = 5;
  napi_value argv[5];
  uint8_t *src, *dst, *lut[3];
  size_t n, m, length;
  if (napi_get_cb_info(env, info, &argc, argv, NULL, NULL) != napi_ok || argc != 5) {
    napi_throw_type_error(env, NULL, "applyRgb8 takes source, destination and three tables");
    return NULL;
  }
  if (!bytes_of(env, argv[0], &src, &n) || !bytes_of(env, argv[1], &dst, &m)) {
    napi_throw_type_error(env, NULL, "source and destination must be Uint8Arrays");
    return NULL;
  }
  if (n % 3 != 0 || m < n) {
    napi_throw_range_error(env, NULL, "source must hold whole RGB pixels and destination at least as many bytes");
    return NULL;
  }
  if (dst != src && dst < src + n && src < dst + n) {
    napi_throw_range_error(env, NULL, "destination overlaps source without being it");
    return NULL;
  }
  for (int c = 0; c < 3; c++) {
    if (!bytes_of(env, argv[2 + c], &lut[c], &length) || length != 256) {
      napi_throw_type_error(env, NULL, "each table must be a Uint8Array of 256 entries");
      return NULL;
    }
  }
  uint8_t r[256], g[256], b[256];
  memcpy(r, lut[0], 256);
  memcpy(g, lut[1], 256);
  memcpy(b, lut[2], 256);
  size_t i = 0;
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
  uint16_t *pairs = n >= PAIRS_FROM ? malloc(3 * 65536 * sizeof(uint16_t)) : NULL;
  if (pairs) {
    /* Four pixels are three 32-bit words whose half-words are red-green, blue-red, green-blue,
       red-green, blue-red, green-blue: two lookups per word in tables of byte pairs. */
    uint16_t *rg = pairs, *br = pairs + 65536, *gb = pairs + 131072;
    for (unsigned hi = 0; hi < 256; hi++) {
      for (unsigned lo = 0; lo < 256; lo++) {
        unsigned k = hi << 8 | lo;
        rg[k] = (uint16_t)(g[hi] << 8 | r[lo]);
        br[k] = (uint16_t)(r[hi] << 8 | b[lo]);
        gb[k] = (uint16_t)(b[hi] << 8 | g[lo]);
      }
    }
    for (; i + 12 <= n; i += 12) {
      uint32_t w0, w1, w2;
      memcpy(&w0, src + i, 4);
      memcpy(&w1, src + i + 4, 4);
      memcpy(&w2, src + i + 8, 4);
      w0 = rg[w0 & 0xffff] | (uint32_t)br[w0 >> 16] << 16;
      w1 = gb[w1 & 0xffff] | (uint32_t)rg[w1 >> 16] << 16;
      w2 = br[w2 & 0xffff] | (uint32_t)gb[w2 >> 16] << 16;
      memcpy(dst + i, &w0, 4);
      memcpy(dst + i + 4, &w1, 4);
      memcpy(dst + i + 8, &w2, 4);
    }
    free(pairs);
  }
#endif
  for (; i < n; i += 3) {
    dst[i] = r[src[i]];
    dst[i + 1] = g[src[i + 1]];
    dst[i + 2] = b[src[i + 2]];
  }
  return NULL;
}

NAPI_MODULE_INIT() {
  napi_value fn;
  if (napi_create_function(env, "applyRgb8", NAPI_AUTO_LENGTH, apply_rgb8, NULL, &fn) != napi_ok) return NULL;
  if (napi_set_named_property(env, exports, "applyRgb8", fn) != napi_ok) return NULL;
  return exports;
}
`;

export interface NativeTables {
  /** Looks every byte of interleaved RGB `source` up in its channel's table into `destination` (which may be `source`). */
  applyRgb8(source: Uint8Array, destination: Uint8Array, red: Uint8Array, green: Uint8Array, blue: Uint8Array): void;
}

export interface NativeTablesStatus {
  loaded: boolean;
  /** Where the compiled addon is, when it loaded. */
  path?: string;
  /** Why it did not, in one line. */
  reason?: string;
}

let state: { addon: NativeTables | null; status: NativeTablesStatus } | undefined;

export interface NativeTablesSettings {
  /** false: always use applyCorrection (default true). */
  enabled?: boolean;
  /** Where the compiled addon is kept (default: see {@link cacheDirs}). */
  cacheDir?: string;
}

let settings: NativeTablesSettings = {};

/**
 * Sets where the addon is kept and whether it is used at all, for the loads that follow (an
 * addon already loaded stays loaded in the process; only this module's choice is made again).
 */
export function configureNativeTables(next: NativeTablesSettings): void {
  settings = { ...next };
  state = undefined;
}

/** Node's headers for addons: Debian's nodejs keeps them under <prefix>/include/node. */
function nodeHeaders(): string | null {
  const dir = join(dirname(dirname(process.execPath)), 'include', 'node');
  return existsSync(join(dir, 'node_api.h')) ? dir : null;
}

/**
 * Where the addon may be kept, in order: the configured folder alone, or else the .cache of the
 * node_modules nearest above this module (the checkout's, whether the module runs from the sources,
 * the command line's bundle or the built server), then the system's temporary folder (for a
 * node_modules that cannot be written to).
 */
function cacheDirs(): string[] {
  if (settings.cacheDir) return [settings.cacheDir];
  const dirs: string[] = [];
  // the command line's CommonJS bundle has __filename; the ES modules of the server and tests have import.meta.url
  const here = typeof __filename === 'string' ? __filename : fileURLToPath(import.meta.url);
  for (let dir = dirname(here); dirname(dir) !== dir; dir = dirname(dir)) {
    if (existsSync(join(dir, 'node_modules'))) {
      dirs.push(join(dir, 'node_modules', '.cache', 'drawerlight-native'));
      break;
    }
  }
  dirs.push(join(tmpdir(), 'drawerlight-native'));
  return dirs;
}

function compile(out: string, headers: string): void {
  mkdirSync(dirname(out), { recursive: true });
  // written under names of their own and renamed into place: two processes or engine threads
  // compiling at once both end whole
  const own = `${process.pid}-${threadId}`;
  const src = `${out}.${own}.c`;
  const tmp = `${out}.${own}.tmp`;
  try {
    writeFileSync(src, SOURCE);
    execFileSync('cc', ['-O2', '-std=c11', '-shared', '-fPIC', '-fvisibility=hidden', `-I${headers}`, '-o', tmp, src], { stdio: ['ignore', 'ignore', 'pipe'], timeout: 60_000 });
    renameSync(tmp, out);
    // the addons of earlier versions of the source are no longer loaded by anything
    for (const f of readdirSync(dirname(out))) if (/^tables-[0-9a-f]{16}\.node$/.test(f) && join(dirname(out), f) !== out) rmSync(join(dirname(out), f), { force: true });
  } finally {
    rmSync(src, { force: true });
    rmSync(tmp, { force: true });
  }
}

function reasonOf(err: unknown): string {
  const e = err as { stderr?: Buffer; message?: string };
  return (e.stderr?.toString().trim() || e.message || String(err)).split('\n')[0];
}

function load(): { addon: NativeTables | null; status: NativeTablesStatus } {
  if (settings.enabled === false) return { addon: null, status: { loaded: false, reason: 'turned off (configureNativeTables)' } };
  const headers = nodeHeaders();
  if (!headers) return { addon: null, status: { loaded: false, reason: `no Node headers (node_api.h) beside ${process.execPath}` } };
  const key = createHash('sha256').update(SOURCE).update(process.arch).update(process.platform).digest('hex').slice(0, 16);
  let reason = '';
  for (const dir of cacheDirs()) {
    const path = join(dir, `tables-${key}.node`);
    try {
      if (!existsSync(path)) compile(path, headers);
    } catch (err) {
      // a folder that cannot be written to: the next one; no compiler: the same in every folder
      reason = reasonOf(err);
      continue;
    }
    try {
      const addon = createRequire(path)(path) as NativeTables;
      if (typeof addon.applyRgb8 !== 'function') throw new Error('the addon has no applyRgb8');
      return { addon, status: { loaded: true, path } };
    } catch (err) {
      return { addon: null, status: { loaded: false, reason: reasonOf(err) } };
    }
  }
  return { addon: null, status: { loaded: false, reason } };
}

/** The native table step, compiled and loaded on first use; null where it cannot be (see {@link nativeTablesStatus}). */
export function nativeTables(): NativeTables | null {
  state ??= load();
  return state.addon;
}

/** Whether the native table step is in use here, and if not, why. */
export function nativeTablesStatus(): NativeTablesStatus {
  state ??= load();
  return state.status;
}

/**
 * Applies 8-bit tables to interleaved 8-bit RGB natively when it can, into `destination` (which
 * may be `source`); returns false, having done nothing, when the caller must use applyCorrection.
 */
export function applyTablesNatively(source: Uint8Array, channels: number, luts: ChannelLuts, destination: Uint8Array): boolean {
  if (channels !== 3 || luts.inDepth !== 8 || luts.outDepth !== 8) return false;
  const { red, green, blue } = luts;
  if (!(red instanceof Uint8Array && green instanceof Uint8Array && blue instanceof Uint8Array)) return false;
  const addon = nativeTables();
  if (!addon) return false;
  addon.applyRgb8(source, destination, red, green, blue);
  return true;
}
