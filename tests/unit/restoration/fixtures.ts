import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

/** Reads a TSV from tests/fixtures, skipping its '#' header lines; first non-comment line names the columns. */
export function readTsv(name: string): Record<string, string>[] {
  const text = readFileSync(fileURLToPath(new URL(`../../fixtures/${name}`, import.meta.url)), 'utf8');
  const lines = text.split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#'));
  const cols = lines[0].split('\t');
  return lines.slice(1).map((l) => Object.fromEntries(l.split('\t').map((v, i) => [cols[i], v])));
}
