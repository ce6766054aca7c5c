/** Plant-local calendar arithmetic with Intl only: stored times stay UTC, weeks are the plant's. */

interface Parts {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
  weekday: number; // 1 = Monday … 7 = Sunday
}

const WEEKDAYS: Record<string, number> = { Mon: 1, Tue: 2, Wed: 3, Thu: 4, Fri: 5, Sat: 6, Sun: 7 };
const formatters = new Map<string, Intl.DateTimeFormat>();

function formatter(timeZone: string): Intl.DateTimeFormat {
  let f = formatters.get(timeZone);
  if (!f) {
    f = new Intl.DateTimeFormat('en-GB', { timeZone, hourCycle: 'h23', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit', second: '2-digit', weekday: 'short' });
    formatters.set(timeZone, f);
  }
  return f;
}

export function localParts(ms: number, timeZone: string): Parts {
  const out: Record<string, string> = {};
  for (const p of formatter(timeZone).formatToParts(new Date(ms))) out[p.type] = p.value;
  return {
    year: Number(out.year),
    month: Number(out.month),
    day: Number(out.day),
    hour: Number(out.hour),
    minute: Number(out.minute),
    second: Number(out.second),
    weekday: WEEKDAYS[out.weekday as string] ?? 1,
  };
}

/** The UTC instant of a plant-local wall time (two passes settle the zone offset, DST included). */
export function zonedToUtc(year: number, month: number, day: number, hour: number, timeZone: string): number {
  const wanted = Date.UTC(year, month - 1, day, hour);
  let guess = wanted;
  for (let i = 0; i < 3; i += 1) {
    const p = localParts(guess, timeZone);
    const shown = Date.UTC(p.year, p.month - 1, p.day, p.hour, p.minute, p.second);
    guess += wanted - shown;
  }
  return guess;
}

/** Last week, Monday 00:00 to the next Monday 00:00, in the plant's time zone. */
export function lastWeek(now: number, timeZone: string): { from: number; to: number } {
  const p = localParts(now, timeZone);
  const today = Date.UTC(p.year, p.month - 1, p.day);
  const thisMonday = new Date(today - (p.weekday - 1) * 86_400_000);
  const lastMonday = new Date(thisMonday.getTime() - 7 * 86_400_000);
  return {
    from: zonedToUtc(lastMonday.getUTCFullYear(), lastMonday.getUTCMonth() + 1, lastMonday.getUTCDate(), 0, timeZone),
    to: zonedToUtc(thisMonday.getUTCFullYear(), thisMonday.getUTCMonth() + 1, thisMonday.getUTCDate(), 0, timeZone),
  };
}

const offsets = new Map<string, number>();

/** The zone's offset from UTC at an instant, in ms; remembered per quarter hour (zones only change on such marks). */
function offsetAt(ms: number, timeZone: string): number {
  const key = `${timeZone}|${Math.floor(ms / 900_000)}`;
  let offset = offsets.get(key);
  if (offset === undefined) {
    const p = localParts(ms, timeZone);
    offset = Date.UTC(p.year, p.month - 1, p.day, p.hour, p.minute, p.second) - (ms - (ms % 1000));
    if (offsets.size > 200_000) offsets.clear();
    offsets.set(key, offset);
  }
  return offset;
}

/** "2026-03-02 07:05:00" in the plant's zone: the local-time column of the exports (Intl once per quarter hour, not per row). */
export function localStamp(ms: number, timeZone: string): string {
  return new Date(ms + offsetAt(ms, timeZone)).toISOString().slice(0, 19).replace('T', ' ');
}

/** A plant-local calendar day range, [first 00:00, day after last 00:00), as UTC instants. */
export function localDaysToUtc(first: string, last: string, timeZone: string): { from: number; to: number } {
  const [y1, m1, d1] = first.split('-').map(Number) as [number, number, number];
  const [y2, m2, d2] = last.split('-').map(Number) as [number, number, number];
  const after = new Date(Date.UTC(y2, m2 - 1, d2) + 86_400_000);
  return {
    from: zonedToUtc(y1, m1, d1, 0, timeZone),
    to: zonedToUtc(after.getUTCFullYear(), after.getUTCMonth() + 1, after.getUTCDate(), 0, timeZone),
  };
}
