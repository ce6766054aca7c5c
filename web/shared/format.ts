/** Numbers, weights and times as the pages show them, in the plant's time zone. */

export function decimalsFor(unit: 'g' | 'kg'): number {
  return unit === 'kg' ? 3 : 1;
}

export function weight(value: number, unit: 'g' | 'kg', decimals = decimalsFor(unit)): string {
  return `${value.toFixed(decimals)} ${unit}`;
}

/** A signed difference in words: "2.4 g over", "1.1 g under". */
export function overUnder(diff: number, unit: 'g' | 'kg'): string {
  const d = decimalsFor(unit);
  const size = Math.abs(diff).toFixed(d);
  if (Number(size) === 0) return 'on';
  return `${size} ${unit} ${diff > 0 ? 'over' : 'under'}`;
}

/** Accepts a comma or a dot as the decimal mark; null when it is not a number. */
export function parseDecimal(text: string): number | null {
  const cleaned = text.trim().replace(/\s/g, '').replace(',', '.');
  if (!/^\d+(\.\d+)?$|^\.\d+$/.test(cleaned)) return null;
  const value = Number(cleaned);
  return Number.isFinite(value) ? value : null;
}

export function clock(iso: string, timeZone: string): string {
  return new Intl.DateTimeFormat('en-GB', { timeZone, hour: '2-digit', minute: '2-digit' }).format(new Date(iso));
}

export function dateTime(iso: string, timeZone: string): string {
  return new Intl.DateTimeFormat('en-GB', { timeZone, day: '2-digit', month: 'short', hour: '2-digit', minute: '2-digit' }).format(new Date(iso));
}

/** "40 s", "12 min", "3 h 5 min", "2 d 4 h". */
export function duration(ms: number): string {
  const s = Math.max(0, Math.round(ms / 1000));
  if (s < 60) return `${s} s`;
  const m = Math.floor(s / 60);
  if (m < 60) return `${m} min`;
  const h = Math.floor(m / 60);
  if (h < 48) return `${h} h ${m % 60} min`;
  return `${Math.floor(h / 24)} d ${h % 24} h`;
}

/** The reasons a line may stand still, in the words the pages use. */
export const STOP_REASON_WORDS: Record<string, string> = {
  break: 'break',
  cleaning: 'cleaning',
  changeover: 'changeover',
  'no-orders': 'no orders',
  breakdown: 'breakdown',
  other: 'other',
  'off-shift': 'off shift',
};

/** "stopped — cleaning, since 14:05" (with the note after it when there is one). */
export function stopWords(stop: { reason: string; note: string | null; since: string }, timeZone: string): string {
  return `stopped — ${STOP_REASON_WORDS[stop.reason] ?? stop.reason}${stop.note ? ` (${stop.note})` : ''}, since ${clock(stop.since, timeZone)}`;
}

const KIND_WORDS: Record<string, string> = {
  'mean-shift': 'Mean shift',
  'spread-up': 'Spread up',
  'pack-below-t2': 'Pack below T2',
  'check-overdue': 'Check overdue',
};

export function alertTitle(kind: string, direction: 'up' | 'down' | null): string {
  const base = KIND_WORDS[kind] ?? kind;
  return kind === 'mean-shift' && direction ? `${base} ${direction}` : base;
}

/** Makes an element with text content only: every value from the server goes in as text, never HTML. */
export function el<K extends keyof HTMLElementTagNameMap>(tag: K, attrs: Record<string, string> = {}, ...children: (Node | string | null)[]): HTMLElementTagNameMap[K] {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (k === 'class') node.className = v;
    else node.setAttribute(k, v);
  }
  for (const child of children) if (child !== null) node.append(child);
  return node;
}

/** The instant a wall-clock time ("2026-03-02T06:00", as a datetime-local input gives it) names in a time zone. */
export function wallTimeToIso(wall: string, timeZone: string): string | null {
  const m = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})$/.exec(wall);
  if (!m) return null;
  const asUtc = Date.UTC(Number(m[1]), Number(m[2]) - 1, Number(m[3]), Number(m[4]), Number(m[5]));
  // the zone's offset at a guess, then again at the answer: right across a change of clocks
  const offsetAt = (t: number) => {
    const p = Object.fromEntries(new Intl.DateTimeFormat('en-GB', { timeZone, hourCycle: 'h23', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit' }).formatToParts(new Date(t)).map((x) => [x.type, x.value]));
    return Date.UTC(Number(p.year), Number(p.month) - 1, Number(p.day), Number(p.hour), Number(p.minute)) - t;
  };
  let t = asUtc - offsetAt(asUtc);
  t = asUtc - offsetAt(t);
  return new Date(t).toISOString();
}

/** The wall-clock time of an instant in a time zone, as a datetime-local input takes it. */
export function isoToWallTime(iso: string, timeZone: string): string {
  const p = Object.fromEntries(new Intl.DateTimeFormat('en-GB', { timeZone, hourCycle: 'h23', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit' }).formatToParts(new Date(iso)).map((x) => [x.type, x.value]));
  return `${p.year}-${p.month}-${p.day}T${p.hour}:${p.minute}`;
}
