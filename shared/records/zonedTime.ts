/**
 * Site-local calendar days and wall-clock times in an IANA time zone, with Intl only (no Node or
 * browser API beyond it), so client and server cut days the same way across daylight-saving changes.
 */

interface LocalParts {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
}

const partFormatters = new Map<string, Intl.DateTimeFormat>();

function partsFormatter(timeZone: string): Intl.DateTimeFormat {
  let f = partFormatters.get(timeZone);
  if (!f) {
    f = new Intl.DateTimeFormat('en-US', { timeZone, hourCycle: 'h23', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit', second: '2-digit' });
    partFormatters.set(timeZone, f);
  }
  return f;
}

/** The wall-clock parts of a UTC instant (ms) in a time zone. */
export function localParts(utcMs: number, timeZone: string): LocalParts {
  const out: Record<string, number> = {};
  for (const p of partsFormatter(timeZone).formatToParts(new Date(utcMs))) {
    if (p.type !== 'literal') out[p.type] = Number(p.value);
  }
  return { year: out.year ?? 1970, month: out.month ?? 1, day: out.day ?? 1, hour: (out.hour ?? 0) % 24, minute: out.minute ?? 0, second: out.second ?? 0 };
}

/** The zone's offset from UTC at an instant, ms (local − UTC; −6 h = −21,600,000 for CST). */
export function zoneOffsetMs(utcMs: number, timeZone: string): number {
  const p = localParts(utcMs, timeZone);
  const asUtc = Date.UTC(p.year, p.month - 1, p.day, p.hour, p.minute, p.second);
  return asUtc - Math.floor(utcMs / 1000) * 1000;
}

/** A `YYYY-MM-DD` day as [year, month, day]; throws on a malformed day. */
export function parseDay(day: string): [number, number, number] {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(day);
  if (!m) throw new Error(`not a YYYY-MM-DD day: ${day}`);
  return [Number(m[1]), Number(m[2]), Number(m[3])];
}

const pad = (n: number) => String(n).padStart(2, '0');

/** The `YYYY-MM-DD` day `n` calendar days after `day` (n may be negative). */
export function addDays(day: string, n: number): string {
  const [y, m, d] = parseDay(day);
  const t = new Date(Date.UTC(y, m - 1, d + n));
  return `${t.getUTCFullYear()}-${pad(t.getUTCMonth() + 1)}-${pad(t.getUTCDate())}`;
}

/** Calendar days from `from` to `to`, both included (`YYYY-MM-DD`). */
export function daysBetween(from: string, to: string): string[] {
  const out: string[] = [];
  for (let d = from; d <= to && out.length < 400; d = addDays(d, 1)) out.push(d);
  return out;
}

/**
 * The UTC instant (ms) of a wall-clock time on a local day, or null when that time does not exist
 * there (skipped by a spring-forward change). A time that occurs twice (fall back) gives the first.
 */
export function localTimeToUtcMs(day: string, hour: number, minute: number, timeZone: string): number | null {
  const [y, m, d] = parseDay(day);
  const wall = Date.UTC(y, m - 1, d, hour, minute);
  // The offset at wall − 1 day and wall + 1 day bracket any single change around this time.
  const candidates = [...new Set([zoneOffsetMs(wall - 86_400_000, timeZone), zoneOffsetMs(wall, timeZone), zoneOffsetMs(wall + 86_400_000, timeZone)])]
    .map((off) => wall - off)
    .filter((t) => {
      const p = localParts(t, timeZone);
      return Date.UTC(p.year, p.month - 1, p.day, p.hour, p.minute) === wall;
    })
    .sort((a, b) => a - b);
  return candidates[0] ?? null;
}

/**
 * The UTC bounds [startMs, endMs) of a local calendar day: 23 h on a spring-forward day, 25 h on a
 * fall-back day. A midnight skipped by a change starts the day at the change.
 */
export function localDayBounds(day: string, timeZone: string): { startMs: number; endMs: number } {
  return { startMs: startOfLocalDay(day, timeZone), endMs: startOfLocalDay(addDays(day, 1), timeZone) };
}

function startOfLocalDay(day: string, timeZone: string): number {
  const exact = localTimeToUtcMs(day, 0, 0, timeZone);
  if (exact !== null) return exact;
  // Midnight skipped: the first minute of the day that exists.
  for (let min = 1; min < 24 * 60; min++) {
    const t = localTimeToUtcMs(day, Math.floor(min / 60), min % 60, timeZone);
    if (t !== null) return t;
  }
  throw new Error(`no local time exists on ${day} in ${timeZone}`);
}

/** The local `YYYY-MM-DD` day of an instant (ms) in a time zone. */
export function localDayOf(utcMs: number, timeZone: string): string {
  const p = localParts(utcMs, timeZone);
  return `${p.year}-${pad(p.month)}-${pad(p.day)}`;
}

const zoneNameFormatters = new Map<string, Intl.DateTimeFormat>();

/** An instant as local `YYYY-MM-DD HH:MM` with the zone's short name ("2026-03-08 04:00 CDT"). */
export function localDateTimeText(utcMs: number, timeZone: string): string {
  const p = localParts(utcMs, timeZone);
  let f = zoneNameFormatters.get(timeZone);
  if (!f) {
    f = new Intl.DateTimeFormat('en-US', { timeZone, timeZoneName: 'short' });
    zoneNameFormatters.set(timeZone, f);
  }
  const zone = f.formatToParts(new Date(utcMs)).find((x) => x.type === 'timeZoneName')?.value ?? timeZone;
  return `${p.year}-${pad(p.month)}-${pad(p.day)} ${pad(p.hour)}:${pad(p.minute)} ${zone}`;
}
