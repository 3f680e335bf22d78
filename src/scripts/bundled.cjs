/**
 * Runs a TypeScript command-line script from one CommonJS bundle, made with esbuild on first use
 * and made again whenever one of our sources or the installed packages changed:
 *   node src/scripts/bundled.cjs src/scripts/correct.ts [args...]
 * tsx transpiles every imported file on every start (about 0.3 s of a short batch). The bundle
 * holds the packages' JavaScript too (sharp's, zod's; sharp's native part still loads from
 * node_modules), and this launcher and the bundle are CommonJS: Node then neither resolves some
 * forty package files one by one nor starts its ES module loader. Measured here (an empty run of
 * `npm run correct`, 20 runs): 94-100 ms with an ES module bundle of our own sources only,
 * 72-75 ms this way, of which 25-30 ms is Node itself. The bundle then starts from V8's code cache
 * of it (see codeCacheFile).
 * Without esbuild, or if the build fails, the script runs through tsx as before.
 */
'use strict';
const { mkdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } = require('node:fs');
const Module = require('node:module');
const { basename, dirname, join, relative, resolve } = require('node:path');
const { pathToFileURL } = require('node:url');
const vm = require('node:vm');

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
/**
 * V8's code cache of the bundle: its functions compiled once, after a run, and loaded with it on
 * the next start instead of being parsed and compiled again (an empty run of `npm run correct`,
 * 12 runs each: median 0.12 s without it, 0.10 s with it). Node 20 has no module compile
 * cache of its own (Node 22's module.enableCompileCache). V8 checks that the cache belongs to this
 * source and this V8 and refuses it otherwise; a refused or missing cache is made again at exit.
 */
const codeCacheFile = `${outfile}.v8cache`;

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
  rmSync(codeCacheFile, { force: true });
  renameSync(tmp, outfile);
  renameSync(stampTmp, stampFile);
}

/** Runs the bundle as require() would, compiled with its code cache when there is a good one. */
function runBundle() {
  const source = readFileSync(outfile, 'utf8');
  // a script compiled here cannot import() other modules (Node 20 gives vm no default loader for it)
  if (source.includes('import(')) return require(outfile);
  let cachedData;
  try {
    cachedData = readFileSync(codeCacheFile);
  } catch {
    cachedData = undefined;
  }
  const script = new vm.Script(Module.wrap(source), { filename: outfile, cachedData });
  if (!cachedData || script.cachedDataRejected) {
    // at exit, so that the functions the run compiled are in it too
    process.once('exit', () => {
      const tmp = `${codeCacheFile}.${process.pid}.tmp`;
      try {
        writeFileSync(tmp, script.createCachedData());
        renameSync(tmp, codeCacheFile);
      } catch {
        rmSync(tmp, { force: true });
      }
    });
  }
  const bundle = new Module(outfile, module);
  bundle.filename = outfile;
  bundle.paths = Module._nodeModulePaths(dirname(outfile));
  bundle.loaded = true;
  script.runInThisContext().call(bundle.exports, bundle.exports, Module.createRequire(outfile), bundle, outfile, dirname(outfile));
  return bundle.exports;
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
    runBundle();
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
