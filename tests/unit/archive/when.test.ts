import { describe, expect, it } from 'vitest';
import { formatDay, formatWhen, isTimeZone } from '../../../src/lib/archive/when.ts';

// Offsets from the IANA time zone database: Europe/Dublin is UTC+1 in summer (IST) and UTC+0 in
// winter; America/New_York is UTC-5 in winter; Pacific/Auckland is UTC+13 in December (NZDT).
describe('one way to write a moment, in the archive time zone', () => {
  it('writes day, short month, year and a 24-hour time', () => {
    expect(formatWhen('2026-12-03T14:05:09Z', 'UTC')).toBe('3 Dec 2026, 14:05');
    expect(formatDay('2026-12-03T14:05:09Z', 'UTC')).toBe('3 Dec 2026');
  });

  it('turns the moment into the archive time zone, the day included', () => {
    expect(formatWhen('2026-07-01T23:30:00Z', 'Europe/Dublin')).toBe('2 Jul 2026, 00:30');
    expect(formatWhen('2026-12-03T03:00:00Z', 'America/New_York')).toBe('2 Dec 2026, 22:00');
    expect(formatDay('2026-12-03T12:00:00Z', 'Pacific/Auckland')).toBe('4 Dec 2026');
    expect(formatWhen('2026-12-03T00:00:00Z', 'Europe/Dublin')).toBe('3 Dec 2026, 00:00');
  });

  it('knows IANA zone names and falls back to UTC for one it does not know', () => {
    expect(isTimeZone('Europe/Dublin')).toBe(true);
    expect(isTimeZone('Mars/Olympus')).toBe(false);
    expect(isTimeZone('')).toBe(false);
    expect(formatWhen('2026-12-03T14:05:00Z', 'Mars/Olympus')).toBe('3 Dec 2026, 14:05');
  });

  it('takes a Date, an ISO string or milliseconds alike', () => {
    const d = new Date('2026-12-03T14:05:00Z');
    expect(formatWhen(d, 'UTC')).toBe(formatWhen(d.toISOString(), 'UTC'));
    expect(formatWhen(d.getTime(), 'UTC')).toBe('3 Dec 2026, 14:05');
  });
});
