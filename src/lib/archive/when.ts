/**
 * One way to write a moment everywhere the product shows one (pages, islands, e-mails, CSV "set
 * aside on" aside): "3 Dec 2026, 14:05" or, for a day, "3 Dec 2026", in the archive's time zone,
 * the same on the server and in every browser whatever its language or clock. Pure: shared.
 */

/** The zone used when an archive names none, or one this runtime does not know. */
export const DEFAULT_TIME_ZONE = 'UTC';

/** True when `zone` is an IANA time zone name this runtime knows ("Europe/Dublin", "UTC"). */
export function isTimeZone(zone: string): boolean {
  if (!zone || zone.length > 64) return false;
  try {
    new Intl.DateTimeFormat('en-GB', { timeZone: zone });
    return true;
  } catch {
    return false;
  }
}

const formats = new Map<string, Intl.DateTimeFormat>();
function format(zone: string, withTime: boolean): Intl.DateTimeFormat {
  const tz = isTimeZone(zone) ? zone : DEFAULT_TIME_ZONE;
  const key = `${tz}|${withTime}`;
  let f = formats.get(key);
  if (!f) {
    f = new Intl.DateTimeFormat('en-GB', {
      timeZone: tz,
      day: 'numeric',
      month: 'short',
      year: 'numeric',
      ...(withTime ? { hour: '2-digit', minute: '2-digit', hourCycle: 'h23' as const } : {}),
    });
    formats.set(key, f);
  }
  return f;
}

const asDate = (when: Date | string | number) => (when instanceof Date ? when : new Date(when));

/** "3 Dec 2026, 14:05" in the archive's time zone. */
export function formatWhen(when: Date | string | number, timeZone: string = DEFAULT_TIME_ZONE): string {
  const parts = format(timeZone, true).formatToParts(asDate(when));
  const get = (t: Intl.DateTimeFormatPartTypes) => parts.find((p) => p.type === t)?.value ?? '';
  return `${get('day')} ${get('month')} ${get('year')}, ${get('hour')}:${get('minute')}`;
}

/** "3 Dec 2026" in the archive's time zone. */
export function formatDay(when: Date | string | number, timeZone: string = DEFAULT_TIME_ZONE): string {
  const parts = format(timeZone, false).formatToParts(asDate(when));
  const get = (t: Intl.DateTimeFormatPartTypes) => parts.find((p) => p.type === t)?.value ?? '';
  return `${get('day')} ${get('month')} ${get('year')}`;
}

/** The archive's time zone as the page gives it to scripts (Shell sets it on <html>), for islands that render only in the browser. */
export function pageTimeZone(): string {
  if (typeof document === 'undefined') return DEFAULT_TIME_ZONE;
  return document.documentElement.dataset.timeZone || DEFAULT_TIME_ZONE;
}
