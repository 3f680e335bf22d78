import { describe, expect, it } from 'vitest';
import { exportProgressWords, type ExportStatus } from '../../../src/lib/archive/exports.ts';

type Progress = Pick<ExportStatus, 'state' | 'step' | 'progress' | 'check'>;
const status = (over: Partial<Progress>): Progress => ({ state: 'running', step: 'packing', progress: { done: 0, total: 500, percent: 0 }, check: { done: 0, total: 0 }, ...over });

describe('what the export page says while an export runs', () => {
  it('counts the prints while they are packed', () => {
    expect(exportProgressWords(status({ progress: { done: 499, total: 500, percent: 100 } }))).toEqual({ words: 'Packing: 499 of 500 prints', percent: 100 });
  });

  it('says the bag is being checked, file by file, once every print is packed', () => {
    const p = exportProgressWords(status({ step: 'checking', progress: { done: 500, total: 500, percent: 100 }, check: { done: 250, total: 1001 } }));
    expect(p.words).toBe('All 500 prints packed. Checking every file of the archive against its checksum: 250 of 1001 files');
    expect(p.percent).toBe(25);
    expect(exportProgressWords(status({ step: 'checking', progress: { done: 1, total: 1, percent: 100 } })).words).toBe('All 1 print packed. Checking every file of the archive against its checksum');
  });

  it('says an export not started yet is waiting', () => {
    expect(exportProgressWords(status({ state: 'queued', step: null })).words).toBe('Waiting for the worker to start');
  });
});
