/**
 * The benchmarks' floor: a bare sharp decode -> JPEG q92 encode (sharp's defaults otherwise), one
 * scan after another, on one core. Run as a child process, pinned to one CPU with `taskset` by
 * tests/bench/floor.ts: libvips' JPEG writer otherwise compresses on a second thread while the
 * first decodes, so "one libvips thread" still keeps two cores busy, and dividing that by two
 * cores would count the second core twice.
 *   node --import tsx tests/bench/bare.ts <passes> <files...>
 * Prints one JSON line: the fastest pass's wall and CPU ms per scan, and the output sizes.
 */
import { readFileSync } from 'node:fs';
import sharp from 'sharp';

sharp.cache(false);
sharp.concurrency(1);

const [passesArg, ...files] = process.argv.slice(2);
const passes = Math.max(1, Number(passesArg) || 1);
const bytes = files.map((f) => readFileSync(f));
await sharp(bytes[0]).jpeg({ quality: 92 }).toBuffer();
let best = { wall: Infinity, cpu: Infinity };
const sizes: number[] = [];
for (let pass = 0; pass < passes; pass++) {
  const c0 = process.cpuUsage();
  const t0 = performance.now();
  for (const b of bytes) {
    const out = await sharp(b).jpeg({ quality: 92 }).toBuffer();
    if (pass === 0) sizes.push(out.length);
  }
  const wall = (performance.now() - t0) / bytes.length;
  const c = process.cpuUsage(c0);
  if (wall < best.wall) best = { wall, cpu: (c.user + c.system) / 1000 / bytes.length };
}
process.stdout.write(JSON.stringify({ wallMs: best.wall, cpuMs: best.cpu, sizes }) + '\n');
