/**
 * Runs a TypeScript command-line script from one CommonJS bundle, made with esbuild on first use
 * and made again whenever one of our sources or the installed packages changed:
 *   node src/scripts/bundled.cjs src/scripts/correct.ts [args...]
 * tsx transpiles every imported file on every start (about 0.3 s of a short batch). The bundle
 * holds the packages' JavaScript too (sharp's, zod's; sharp's native part still loads from
 * node_modules), and this launcher and the bundle are CommonJS: Node then neither resolves some
 * forty package files one by one nor starts its ES module loader. Measured here (an empty run of
 * `npm run correct`, 20 runs): 94-100 ms with an ES module bundle of our own sources only,
 * 72-75 ms this way, of which 25-30 ms is Node itself.
 * Without esbuild, or if the build fails, the script runs through tsx as before.
 */
'use strict';
const { mkdirSync, readFileSync, renameSync, statSync, writeFileSync } = require('node:fs');
const { basename, join, relative, resolve } = require('node:path');
const { pathToFileURL } = require('node:url');

const root = resolve(__dirname, '../..');
const cacheDir = join(root, 'node_modules', '.cache', 'drawerlight-bundled');
/** Bump when the build options change, so older bundles are rebuilt. */
const FORMAT = 2;
/**
 * npm rewrites this on every install, so it stands for the packages inside the bundle (a file of
 * a package edited by hand is not noticed).
 */
const INSTALLED = 'node_modules/.package-lock.json';

const entryArg = process.argv[2];
if (!entryArg) {
  process.stderr.write('usage: node src/scripts/bundled.cjs <script.ts> [args...]\n');
  process.exit(2);
}
const entry = resolve(root, entryArg);
// the script reads its own arguments from argv[2] on, as when it is run directly
process.argv.splice(2, 1);

const name = relative(root, entry).replace(/\.[cm]?ts$/, '').replace(/[\\/]/g, '__');
const outfile = join(cacheDir, `${name}.cjs`);
const stampFile = join(cacheDir, `${name}.inputs.json`);

/** Each file's size and modification time, as recorded when the bundle was built (null when missing). */
function fingerprint(files) {
  return files.map((f) => {
    try {
      const st = statSync(join(root, f));
      return [f, st.size, st.mtimeMs];
    } catch {
      return [f, null, null];
    }
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
  const { build: esbuild } = require('esbuild');
  mkdirSync(cacheDir, { recursive: true });
  // written under names of their own and renamed into place: two runs building at once both end whole
  const tmp = `${outfile}.${process.pid}.tmp`;
  const result = await esbuild({
    absWorkingDir: root,
    entryPoints: [entry],
    outfile: tmp,
    bundle: true,
    platform: 'node',
    format: 'cjs',
    target: 'node20',
    metafile: true,
    logLevel: 'error',
  });
  const inputs = [...Object.keys(result.metafile.inputs).filter((f) => !f.includes('node_modules')), INSTALLED];
  const stampTmp = `${stampFile}.${process.pid}.tmp`;
  writeFileSync(stampTmp, JSON.stringify({ format: FORMAT, inputs: fingerprint(inputs) }));
  renameSync(tmp, outfile);
  renameSync(stampTmp, stampFile);
}

async function main() {
  let bundled = upToDate();
  if (!bundled) {
    try {
      await build();
      bundled = true;
    } catch (err) {
      process.stderr.write(`(${basename(entry)}: running through tsx, the bundle could not be built: ${String((err && err.message) || err).split('\n')[0]})\n`);
    }
  }
  if (bundled) {
    require(outfile);
  } else {
    const { register } = await import('tsx/esm/api');
    register();
    await import(pathToFileURL(entry).href);
  }
}

main().catch((err) => {
  process.stderr.write(`${(err && err.stack) || err}\n`);
  process.exit(1);
});
