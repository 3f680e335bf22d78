// An engine-like thread for native-tables.test.ts: registers tsx (threads do not inherit it, as in
// jobs/engine-thread.mjs), loads the native table step and applies a table, then reports.
const { register } = await import('tsx/esm/api');
register();
const { parentPort, workerData } = await import('node:worker_threads');
const { configureNativeTables, nativeTables, nativeTablesStatus } = await import('../../../src/lib/restoration/native-tables.ts');
configureNativeTables({ cacheDir: workerData.cacheDir });
const pixels = new Uint8Array(3 * 400_000).fill(10);
const invert = new Uint8Array(256).map((_, i) => 255 - i);
nativeTables()?.applyRgb8(pixels, pixels, invert, invert, invert);
parentPort.postMessage({ status: nativeTablesStatus(), first: pixels[0], last: pixels[pixels.length - 1] });
