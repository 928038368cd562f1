/**
 * The food-safety log as CSV for an inspector (RFC 4180, UTF-8 with BOM, CRLF): a header block with
 * the site, box, period, limit and its source and the food-safety statement, then one section per
 * table (scheduled readings, daily min/max, excursions, entries). Times in the site's zone.
 */
import type { FoodLogDto } from '../../shared/schemas/foodLog';
import { localDateTimeText } from '../../shared/records/zonedTime';

type Cell = string | number | null;

/** One CSV cell: quoted when needed; text that a spreadsheet would run as a formula is prefixed with an apostrophe. */
export function csvCell(v: Cell): string {
  if (v === null) return '';
  let s = typeof v === 'number' ? String(v) : v;
  if (typeof v === 'string' && /^[=+@\t\r]|^-(?![\d.])/.test(s)) s = `'${s}`;
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

const row = (cells: Cell[]) => cells.map(csvCell).join(',');
/** °C to °F, one decimal. */
export const toF = (c: number): number => Math.round((c * 1.8 + 32) * 10) / 10;
const c1 = (c: number | null) => (c === null ? null : Math.round(c * 10) / 10);
const f1 = (c: number | null) => (c === null ? null : toF(c));

/** The CSV text of a log. */
export function foodLogCsv(log: FoodLogDto): string {
  const tz = log.site.timeZone;
  const t = (iso: string | null) => (iso ? localDateTimeText(Date.parse(iso), tz) : null);
  const lines: string[] = [
    row(['Food-safety temperature log']),
    row(['Customer', log.customer.name]),
    row(['Site', log.site.name]),
    row(['Time zone', tz]),
    row(['Box', `${log.box.name} (${log.box.kind})`]),
    row(['Period', `${log.from} to ${log.to}`]),
    row(['Limit', `${log.limitC} °C (${toF(log.limitC)} °F)`]),
    row(['Limit source', log.limitSource]),
    row(['Plan', `a reading every ${log.intervalH} h of local time, the nearest stored reading within ${log.toleranceMin} min`]),
    row(['Figures', log.sourceNote]),
    row(['Statement', log.statement]),
    '',
    row(['Scheduled readings']),
    row(['day', 'scheduled (local)', 'reading time (local)', 'box air °C', 'box air °F', 'source']),
  ];
  for (const d of log.days) {
    for (const s of d.scheduled) lines.push(row([d.day, s.label, t(s.readingAt) ?? 'no reading', c1(s.boxAirC), f1(s.boxAirC), d.source]));
  }
  lines.push('', row(['Daily minimum and maximum']), row(['day', 'min °C', 'max °C', 'min °F', 'max °F', 'source', 'readings left out (box-air sensor flagged)', 'signed off by', 'signed off at (local)']));
  for (const d of log.days) lines.push(row([d.day, c1(d.minC), c1(d.maxC), f1(d.minC), f1(d.maxC), d.source, d.doubtedReadings, d.signedOff?.byName ?? 'not signed', t(d.signedOff?.at ?? null)]));
  lines.push('', row(['Excursions above the limit']), row(['day', 'start (local)', 'end (local)', 'duration min', 'peak °C', 'peak °F', 'note']));
  for (const d of log.days) {
    for (const e of d.excursions) {
      const note = [e.open ? 'still above at the end of the data (duration is a lower bound)' : '', e.longestGapMin > 15 ? `readings missing for up to ${e.longestGapMin} min during it` : ''].filter(Boolean).join('; ');
      lines.push(row([d.day, t(e.start), t(e.end) ?? 'open', e.durationMin, c1(e.peakC), f1(e.peakC), note || null]));
    }
  }
  lines.push('', row(['Corrective actions, notes, corrections and sign-offs']), row(['day', 'entry', 'kind', 'text', 'product probe °C', 'by', 'action time (local)', 'recorded (local)', 'corrects entry', 'corrected by']));
  for (const d of log.days) {
    for (const e of d.entries) {
      lines.push(row([d.day, e.id, e.kind, e.text, c1(e.productProbeC), e.byName, t(e.at), t(e.recordedAt), e.refersToId, e.correctedBy.join(' ') || null]));
    }
  }
  return `\uFEFF${lines.join('\r\n')}\r\n`;
}
