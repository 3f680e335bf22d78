// Prints vitest's JSON results as the one closing line: `N passed, N failed[, N skipped]`.
import fs from 'node:fs';

const file = process.argv[2];
if (!fs.existsSync(file)) {
  console.log('0 passed, 1 failed');
  console.error('the test runner wrote no results (it failed before running any test)');
  process.exit(1);
}
const r = JSON.parse(fs.readFileSync(file, 'utf8'));
// A file that failed outside its tests (import error, failing beforeAll) counts as one failure.
const failedSuites = (r.testResults ?? []).filter((s) => s.status === 'failed' && !(s.assertionResults ?? []).some((t) => t.status === 'failed')).length;
const passed = r.numPassedTests ?? 0;
const failed = (r.numFailedTests ?? 0) + failedSuites;
const skipped = (r.numPendingTests ?? 0) + (r.numTodoTests ?? 0);
console.log(`${passed} passed, ${failed} failed${skipped ? `, ${skipped} skipped` : ''}`);
process.exit(failed > 0 || passed === 0 ? 1 : 0);
