/** Short relative times for "last reading x s ago". */
export function agoText(iso: string | null | undefined, nowMs: number): string {
  if (!iso) return 'never';
  const t = Date.parse(iso);
  if (Number.isNaN(t)) return 'unknown';
  const s = Math.max(0, Math.round((nowMs - t) / 1000));
  if (s < 60) return `${s} s ago`;
  const m = Math.floor(s / 60);
  if (m < 60) return `${m} min ago`;
  const h = Math.floor(m / 60);
  if (h < 48) return `${h} h ${m % 60} min ago`;
  return `${Math.floor(h / 24)} days ago`;
}

/** Seconds since an ISO time (Infinity when missing). */
export function ageSeconds(iso: string | null | undefined, nowMs: number): number {
  if (!iso) return Number.POSITIVE_INFINITY;
  const t = Date.parse(iso);
  return Number.isNaN(t) ? Number.POSITIVE_INFINITY : Math.max(0, (nowMs - t) / 1000);
}

/**
 * A date and time with its zone always named ("3 Dec 2026, 14:05 CET"): in `timeZone` (an IANA name,
 * e.g. the site's) when given, else in this device's zone. '—' when missing.
 */
export function dateTimeText(iso: string | null | undefined, timeZone?: string | null): string {
  if (!iso) return '—';
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return '—';
  const opts: Intl.DateTimeFormatOptions = { day: 'numeric', month: 'short', year: 'numeric', hour: '2-digit', minute: '2-digit', timeZoneName: 'short' };
  try {
    return d.toLocaleString(undefined, { ...opts, timeZone: timeZone || undefined });
  } catch {
    // An unknown zone name: this device's zone, still named.
    return d.toLocaleString(undefined, opts);
  }
}

/** Intl formatters are costly to build (tens of µs); one per zone and style is kept. */
const siteFormatters = new Map<string, Intl.DateTimeFormat>();
function siteFormatter(timeZone: string, withDate: boolean): Intl.DateTimeFormat {
  const key = `${timeZone}|${withDate ? 'd' : 't'}`;
  let f = siteFormatters.get(key);
  if (!f) {
    try {
      f = new Intl.DateTimeFormat(undefined, { timeZone, hour: '2-digit', minute: '2-digit', timeZoneName: 'short', ...(withDate ? { day: 'numeric', month: 'short' } : {}) });
    } catch {
      // An unknown zone name: show UTC, which the zone label then says.
      f = new Intl.DateTimeFormat(undefined, { timeZone: 'UTC', hour: '2-digit', minute: '2-digit', timeZoneName: 'short', ...(withDate ? { day: 'numeric', month: 'short' } : {}) });
    }
    siteFormatters.set(key, f);
  }
  return f;
}

/**
 * A time in the site's own zone with the zone shown ("14:05 CET"), with the date when it is not
 * within the last 20 hours; '—' when missing. `timeZone` is an IANA name (UTC when absent).
 */
export function siteTimeText(iso: string | null | undefined, timeZone: string | null | undefined, nowMs: number = Date.now()): string {
  if (!iso) return '—';
  const t = Date.parse(iso);
  if (Number.isNaN(t)) return '—';
  return siteFormatter(timeZone || 'UTC', Math.abs(nowMs - t) > 20 * 3_600_000).format(t);
}

const clockFormatters = new Map<string, Intl.DateTimeFormat>();
/**
 * A chart tick in the site's zone, without the zone (the chart names it once): "14:05", or
 * "3 Dec 14:05" with `withDate`. `timeZone` is an IANA name (UTC when absent or unknown).
 */
export function siteClockText(ms: number, timeZone: string | null | undefined, withDate = false): string {
  const zone = timeZone || 'UTC';
  const key = `${zone}|${withDate ? 'd' : 't'}`;
  let f = clockFormatters.get(key);
  if (!f) {
    const opts: Intl.DateTimeFormatOptions = { hour: '2-digit', minute: '2-digit', hourCycle: 'h23', ...(withDate ? { day: 'numeric', month: 'short' } : {}) };
    try {
      f = new Intl.DateTimeFormat(undefined, { ...opts, timeZone: zone });
    } catch {
      f = new Intl.DateTimeFormat(undefined, { ...opts, timeZone: 'UTC' });
    }
    clockFormatters.set(key, f);
  }
  return f.format(ms);
}
