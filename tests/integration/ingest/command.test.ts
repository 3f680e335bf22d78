import { execFileSync, spawn } from 'node:child_process';
import { mkdtempSync, mkdirSync, openSync, writeSync, closeSync, writeFileSync, rmSync, symlinkSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Batch, Item, Original, closeDb } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { generatedScans, sha256, waitSettled } from '../../support/scans.ts';

let a: TestArchive;
let dir: string;
beforeAll(async () => {
  a = await makeArchive('command');
  dir = mkdtempSync(join(tmpdir(), 'drawerlight-ingest-cmd-'));
});
afterAll(async () => {
  rmSync(dir, { recursive: true, force: true });
  await closeDb();
});

function ingest(args: string[]) {
  const child = spawn(process.execPath, ['--import', 'tsx', 'src/scripts/ingest.ts', ...args], { env: process.env, stdio: ['ignore', 'pipe', 'pipe'] });
  let out = '';
  child.stdout.on('data', (d) => (out += d));
  child.stderr.on('data', (d) => (out += d));
  const done = new Promise<number>((resolve) => child.on('exit', (code) => resolve(code ?? -1)));
  return { child, done, output: () => out };
}

describe('npm run ingest', () => {
  it('ingests a folder through the same service, as the archive\'s first owner, and reports refused files', async () => {
    const folder = join(dir, 'drawer');
    mkdirSync(join(folder, 'left'), { recursive: true });
    const scans = await generatedScans(3, 6000);
    writeFileSync(join(folder, scans[0].name), scans[0].bytes);
    writeFileSync(join(folder, 'left', scans[1].name), scans[1].bytes);
    writeFileSync(join(folder, 'left', scans[2].name), scans[2].bytes);
    writeFileSync(join(folder, 'copy-of-first.jpg'), scans[0].bytes);
    writeFileSync(join(folder, 'index.txt'), 'Left drawer of the bureau (invented)\n');
    writeFileSync(join(folder, '.DS_Store'), 'ignored');

    const run = ingest(['--archive', a.slug, '--batch', 'Bureau, left drawer', folder]);
    const code = await run.done;
    const out = run.output();
    expect(code, out).toBe(1);
    expect(out).toContain('made the batch "Bureau, left drawer"');
    expect(out).toMatch(/refused\s+index\.txt: This is a text file/);
    // Two at a time: whichever of the two identical files is stored first, the other is reported.
    expect(out).toMatch(/already in "Bureau, left drawer" as #\d (copy-of-first\.jpg: scan-6000\.jpg|scan-6000\.jpg: copy-of-first\.jpg)/);
    expect(out).toContain('3 added, 1 already in the archive, 1 refused');

    const batch = (await Batch.findOne({ where: { archiveId: a.id, name: 'Bureau, left drawer' } }))!;
    expect(batch.createdBy).toBe(a.owner.id);
    const items = await Item.findAll({ where: { batchId: batch.id }, order: [['seq', 'ASC']] });
    const names = items.map((i) => i.originalName).sort();
    expect(names.filter((n) => n.startsWith('left/'))).toEqual([`left/${scans[1].name}`, `left/${scans[2].name}`]);
    expect(names.filter((n) => !n.startsWith('left/'))).toHaveLength(1);
    const status = await waitSettled(asToken(a.editor), batch.id);
    expect(status.counts).toMatchObject({ ready: 3, total: 3 });
  }, 120_000);

  it("says which entries it skipped and why, one line each: hidden files and folders, links, pipes, the system's own files", async () => {
    const folder = join(dir, 'sideboard');
    mkdirSync(join(folder, '.thumbnails'), { recursive: true });
    const scans = await generatedScans(3, 6100);
    writeFileSync(join(folder, scans[0].name), scans[0].bytes);
    // a scan outside the folder, reached only through a link
    const outside = join(dir, 'outside-the-folder.jpg');
    writeFileSync(outside, scans[1].bytes);
    symlinkSync(outside, join(folder, 'linked.jpg'));
    writeFileSync(join(folder, '.thumbnails', scans[2].name), scans[2].bytes);
    writeFileSync(join(folder, '._scan.jpg'), 'resource fork');
    writeFileSync(join(folder, 'Thumbs.db'), 'cache');
    execFileSync('mkfifo', [join(folder, 'scanner-pipe')]);

    const run = ingest(['--archive', a.slug, '--batch', 'Sideboard', folder]);
    const code = await run.done;
    const out = run.output();
    expect(code, out).toBe(0);
    const skipped = out.split('\n').filter((l) => l.startsWith('skipped'));
    expect(skipped.sort()).toEqual(
      [
        'skipped    .thumbnails: a hidden folder (nothing in it is taken)',
        'skipped    ._scan.jpg: a hidden file',
        "skipped    Thumbs.db: the system's own file, not a scan",
        'skipped    linked.jpg: a link to another place (links are not followed: copy the scan itself into the folder)',
        'skipped    scanner-pipe: a pipe (FIFO), not a file',
      ].sort(),
    );
    expect(out).toContain('1 added, 0 already in the archive, 0 refused, 5 skipped (not scans)');
    // Nothing was taken from what it skipped: only the one scan is in the batch and the archive.
    const batch = (await Batch.findOne({ where: { archiveId: a.id, name: 'Sideboard' } }))!;
    const items = await Item.findAll({ where: { batchId: batch.id } });
    expect(items.map((i) => i.originalName)).toEqual([scans[0].name]);
    for (const other of [scans[1], scans[2]]) expect(await Original.count({ where: { archiveId: a.id, sha256: sha256(other.bytes) } })).toBe(0);
  }, 120_000);

  it('refuses --as for a viewer, and an unknown archive, with a usage error', async () => {
    const viewer = ingest(['--archive', a.slug, '--batch', 'Nope', '--as', a.viewer.email, dir]);
    expect(await viewer.done).toBe(2);
    expect(viewer.output()).toContain('adding scans needs an editor or owner');
    const unknown = ingest(['--archive', 'no-such-archive', '--batch', 'Nope', dir]);
    expect(await unknown.done).toBe(2);
    expect(unknown.output()).toContain('there is no archive "no-such-archive"');
  }, 60_000);

  it('with --watch takes a scan the scanner is still writing only once it is complete', async () => {
    const folder = join(dir, 'scanner-out');
    mkdirSync(folder, { recursive: true });
    const run = ingest(['--archive', a.slug, '--batch', 'Scanner tray', '--as', a.editor.email, '--watch', folder]);
    await waitFor(() => run.output().includes('watching'), 30_000);
    const [scan] = await generatedScans(1, 7000);
    // Written in four pieces, 700 ms apart, as a slow scanner would.
    const path = join(folder, 'tray-0001.jpg');
    const fd = openSync(path, 'w');
    const piece = Math.ceil(scan.bytes.length / 4);
    for (let i = 0; i < 4; i++) {
      writeSync(fd, scan.bytes.subarray(i * piece, (i + 1) * piece));
      await new Promise((r) => setTimeout(r, 700));
    }
    closeSync(fd);
    await waitFor(() => /added\s+#1 tray-0001\.jpg/.test(run.output()), 30_000);
    run.child.kill('SIGINT');
    expect(await run.done).toBe(0);
    const original = await Original.findOne({ where: { archiveId: a.id, sha256: sha256(scan.bytes) } });
    expect(original?.bytes).toBe(scan.bytes.length);
    const batch = (await Batch.findOne({ where: { archiveId: a.id, name: 'Scanner tray' } }))!;
    expect(batch.createdBy).toBe(a.editor.id);
    expect(await Item.count({ where: { batchId: batch.id } })).toBe(1);
  }, 90_000);
});

async function waitFor(test: () => boolean, timeoutMs: number) {
  const deadline = Date.now() + timeoutMs;
  while (!test()) {
    if (Date.now() > deadline) throw new Error('timed out');
    await new Promise((r) => setTimeout(r, 100));
  }
}
