/**
 * Runs a TypeScript command-line script from a bundle of our own sources, made with esbuild on
 * first use and made again whenever one of those sources changed:
 *   node src/scripts/bundled.mjs src/scripts/correct.ts [args...]
 * tsx transpiles every imported file on every start (about 0.3 s of a short batch); the bundle
 * starts in about 0.1 s. Packages stay outside the bundle and load from node_modules as usual.
 * Without esbuild, or if the build fails, the script runs through tsx as before.
 */
import { mkdirSync, readFileSync, renameSync, statSync, writeFileSync } from 'node:fs';
import { basename, dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '../..');
const cacheDir = join(root, 'node_modules', '.cache', 'drawerlight-bundled');
/** Bump when the build options change, so older bundles are rebuilt. */
const FORMAT = 1;

const entryArg = process.argv[2];
if (!entryArg) {
  process.stderr.write('usage: node src/scripts/bundled.mjs <script.ts> [args...]\n');
  process.exit(2);
}
const entry = resolve(root, entryArg);
// the script reads its own arguments from argv[2] on, as when it is run directly
process.argv.splice(2, 1);

const name = relative(root, entry).replace(/\.[cm]?ts$/, '').replace(/[\\/]/g, '__');
const outfile = join(cacheDir, `${name}.mjs`);
const stampFile = join(cacheDir, `${name}.inputs.json`);

/** Each source file's size and modification time, as recorded when the bundle was built. */
function fingerprint(files) {
  return files.map((f) => {
    const st = statSync(join(root, f));
    return [f, st.size, st.mtimeMs];
  });
}

function upToDate() {
  try {
    const stamp = JSON.parse(readFileSync(stampFile, 'utf8'));
    if (stamp.format !== FORMAT) return false;
    statSync(outfile);
    return JSON.stringify(fingerprint(stamp.inputs.map((i) => i[0]))) === JSON.stringify(stamp.inputs);
  } catch {
    return false;
  }
}

async function build() {
  const { build: esbuild } = await import('esbuild');
  mkdirSync(cacheDir, { recursive: true });
  // written under names of their own and renamed into place: two runs building at once both end whole
  const tmp = `${outfile}.${process.pid}.tmp`;
  const result = await esbuild({
    absWorkingDir: root,
    entryPoints: [entry],
    outfile: tmp,
    bundle: true,
    platform: 'node',
    format: 'esm',
    target: 'node20',
    packages: 'external',
    metafile: true,
    logLevel: 'error',
  });
  const inputs = Object.keys(result.metafile.inputs).filter((f) => !f.includes('node_modules'));
  const stampTmp = `${stampFile}.${process.pid}.tmp`;
  writeFileSync(stampTmp, JSON.stringify({ format: FORMAT, inputs: fingerprint(inputs) }));
  renameSync(tmp, outfile);
  renameSync(stampTmp, stampFile);
}

let bundled = upToDate();
if (!bundled) {
  try {
    await build();
    bundled = true;
  } catch (err) {
    process.stderr.write(`(${basename(entry)}: running through tsx, the bundle could not be built: ${String(err?.message ?? err).split('\n')[0]})\n`);
  }
}
if (bundled) {
  await import(pathToFileURL(outfile).href);
} else {
  const { register } = await import('tsx/esm/api');
  register();
  await import(pathToFileURL(entry).href);
}
