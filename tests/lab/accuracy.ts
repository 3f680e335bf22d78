/**
 * `npm run bench:accuracy`: how well the engine restores real photographs aged by the lab's own
 * simulator, beside the same run's baselines. Prints the validation part's figures under their own
 * names and the development part's with a `dev_` prefix (the estimator's priors are fitted on the
 * development part only; see tests/lab/README.md). Options: `--part dev|validation` to run one part,
 * `--json <file>` to keep every case's figures.
 */
import { writeFileSync } from 'node:fs';
import { labCases } from './cases';
import type { Part } from './photos';
import { rankCorrelation } from './metrics';
import { METHODS, runCases, type CaseResult } from './run-cases';

function arg(name: string): string | undefined {
  const i = process.argv.indexOf(`--${name}`);
  return i >= 0 ? process.argv[i + 1] : undefined;
}

const mean = (xs: number[]) => (xs.length ? xs.reduce((a, b) => a + b, 0) / xs.length : NaN);

/** The figures of one part, as `name: value` lines. */
export function figures(results: CaseResult[], prefix: string): string[] {
  const lines: string[] = [];
  const faded = results.filter((r) => r.kind === 'faded');
  const unfaded = results.filter((r) => r.kind === 'unfaded');
  const pack = results.filter((r) => r.kind === 'pack');
  const fmt = (x: number) => (Number.isFinite(x) ? x.toFixed(2) : 'n/a');
  for (const m of METHODS) {
    const p = prefix + (m === 'drawerlight' ? '' : `${m}_`);
    const de = (rs: CaseResult[]) => mean(rs.map((r) => r.de[m]));
    lines.push(`${p}faded_mean_de00: ${fmt(de(faded))}`);
    lines.push(`${p}bordered_de00: ${fmt(de(faded.filter((r) => r.bordered)))}`);
    lines.push(`${p}borderless_de00: ${fmt(de(faded.filter((r) => !r.bordered)))}`);
    const categories = [...new Set(faded.map((r) => r.category))];
    for (const c of categories) lines.push(`${p}${c.replace(/-/g, '_')}_de00: ${fmt(de(faded.filter((r) => r.category === c)))}`);
    lines.push(`${p}worst_de00: ${fmt(Math.max(...faded.map((r) => r.de[m])))}`);
    if (m !== 'floor') lines.push(`${p}unfaded_change_de00: ${fmt(de(unfaded))}`);
    lines.push(`${p}pack_single_de00: ${fmt(de(pack))}`);
    if (m === 'drawerlight') lines.push(`${p}pack_pooled_de00: ${fmt(mean(pack.map((r) => r.pooledDe ?? NaN)))}`);
  }
  lines.push(`${prefix}unfaded_graded_above_slight: ${unfaded.filter((r) => r.fadeGrade === 'moderate' || r.fadeGrade === 'severe').length} of ${unfaded.length}`);
  const graded = [...faded, ...pack];
  lines.push(`${prefix}uncertainty_rank_corr: ${fmt(rankCorrelation(graded.map((r) => r.expected), graded.map((r) => r.de.drawerlight)))}`);
  const categoriesWorse = [...new Set(faded.map((r) => r.category))].filter((c) => {
    const rs = faded.filter((r) => r.category === c);
    return mean(rs.map((r) => r.de.drawerlight)) > mean(rs.map((r) => r.de.untouched));
  });
  lines.push(`${prefix}categories_worse_than_untouched: ${categoriesWorse.length ? categoriesWorse.join(' ') : 'none'}`);
  return lines;
}

async function main(): Promise<void> {
  const only = arg('part') as Part | undefined;
  const started = Date.now();
  const cases = labCases(only);
  let last = 0;
  const results = await runCases(cases, (done, total) => {
    if (Date.now() - last > 5000 || done === total) {
      last = Date.now();
      process.stderr.write(`  ${done} of ${total} cases\n`);
    }
  });
  const json = arg('json');
  if (json) writeFileSync(json, JSON.stringify(results, null, 1));
  const out: string[] = [];
  const count = (part: Part) => results.filter((r) => r.part === part);
  if (!only || only === 'dev') out.push(...figures(count('dev'), 'dev_'));
  if (!only || only === 'validation') out.push(...figures(count('validation'), ''));
  out.push(`cases: ${results.length}`);
  out.push(`lab_seconds: ${((Date.now() - started) / 1000).toFixed(0)}`);
  console.log(out.join('\n'));
}

main().catch((err) => {
  console.error(err);
  process.exit(1);
});

