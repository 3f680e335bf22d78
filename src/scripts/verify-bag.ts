/**
 * `npm run verify-bag -- <zip or folder>`: checks a BagIt bag's fixity (RFC 8493): every payload
 * file against manifest-sha256.txt, the tag files against tagmanifest-sha256.txt, Payload-Oxum,
 * bagit.txt. Lists what is missing, extra or changed; exits 1 on any problem, 2 on bad usage.
 */
import fs from 'node:fs/promises';
import { checkBag, describeBagReport } from '../lib/archive/bagit.ts';
import { openBag } from '../lib/server/bag-files.ts';

const targets = process.argv.slice(2).filter((a) => a !== '--');
if (targets.length === 0) {
  console.error('usage: npm run verify-bag -- <bag.zip | bag folder> [more …]');
  process.exit(2);
}

let failed = false;
for (const target of targets) {
  try {
    await fs.stat(target);
  } catch {
    console.error(`${target}: not found`);
    failed = true;
    continue;
  }
  let bag;
  try {
    bag = await openBag(target);
  } catch (err) {
    console.error(`${target}: cannot be read as a bag (${(err as Error).message})`);
    failed = true;
    continue;
  }
  try {
    const report = await checkBag(bag);
    for (const line of describeBagReport(report)) console.log(`${target}: ${line}`);
    if (!report.ok) {
      failed = true;
      console.log(`${target}: NOT OK (${report.missing.length} missing, ${report.extra.length} extra, ${report.changed.length} changed, ${report.problems.length} other problems)`);
    }
  } finally {
    bag.close();
  }
}
process.exit(failed ? 1 : 0);
