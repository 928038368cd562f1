/**
 * The food-safety log as a printable PDF for an inspector (pdfkit, the built-in Helvetica: no font
 * files): site, box, period, the limit and its source, the food-safety statement, then per day the
 * scheduled readings, min and max, excursions, entries and sign-off. Times in the site's zone.
 */
import PDFDocument from 'pdfkit';
import type { FoodLogDayDto, FoodLogDto } from '../../shared/schemas/foodLog';
import { localDateTimeText } from '../../shared/records/zonedTime';
import { toF } from './csv';

// Characters of Windows-1252 above 0x7F that are not Latin-1 (the built-in fonts' encoding).
const WIN_ANSI_EXTRA = new Set('€‚ƒ„…†‡ˆ‰Š‹ŒŽ‘’“”•–—˜™š›œžŸ');

/** Text the built-in fonts can show: the minus sign as a hyphen, any character outside WinAnsi as '?'. */
export function winAnsi(s: string): string {
  return s.replace(/[−‐‑]/g, '-').replace(/[^\n\x20-\x7e\xa0-\xff]/g, (ch) => (WIN_ANSI_EXTRA.has(ch) ? ch : '?'));
}

const MARGIN = 40;
const temp = (c: number | null) => (c === null ? '-' : `${c.toFixed(1)} °C / ${toF(c).toFixed(1)} °F`);

const SOURCE_WORDS: Record<FoodLogDayDto['source'], string> = { raw: 'raw readings', 'rollup-1m': '1-minute rollups (raw readings no longer kept)', none: 'no readings stored' };

/** The PDF bytes of a log; `compress: false` leaves the content streams readable (tests). */
export function foodLogPdf(log: FoodLogDto, opts: { compress?: boolean } = {}): Promise<Buffer> {
  const doc = new PDFDocument({ size: 'LETTER', margin: MARGIN, compress: opts.compress ?? true, info: { Title: winAnsi(`Food-safety temperature log - ${log.box.name} - ${log.from} to ${log.to}`), Author: 'Rimehold' } });
  const chunks: Buffer[] = [];
  const done = new Promise<Buffer>((resolve, reject) => {
    doc.on('data', (c: Buffer) => chunks.push(c));
    doc.on('end', () => resolve(Buffer.concat(chunks)));
    doc.on('error', reject);
  });
  const tz = log.site.timeZone;
  const t = (iso: string | null) => (iso ? localDateTimeText(Date.parse(iso), tz) : '-');
  const width = doc.page.width - 2 * MARGIN;
  const bottom = () => doc.page.height - MARGIN - 20;
  const text = (s: string, o: PDFKit.Mixins.TextOptions = {}) => doc.text(winAnsi(s), { width, ...o });
  const ensure = (h: number) => {
    if (doc.y + h > bottom()) doc.addPage();
  };
  const cells = (values: string[], widths: number[], bold = false) => {
    ensure(14);
    const y = doc.y;
    let x = MARGIN;
    doc.font(bold ? 'Helvetica-Bold' : 'Helvetica').fontSize(8.5);
    let maxH = 0;
    values.forEach((v, i) => {
      const w = widths[i] ?? 60;
      const h = doc.heightOfString(winAnsi(v), { width: w - 4 });
      doc.text(winAnsi(v), x, y, { width: w - 4 });
      maxH = Math.max(maxH, h);
      x += w;
    });
    doc.x = MARGIN;
    doc.y = y + maxH + 2;
  };

  doc.font('Helvetica-Bold').fontSize(15);
  text('Food-safety temperature log');
  doc.moveDown(0.3).font('Helvetica').fontSize(9.5);
  text(`Customer: ${log.customer.name}`);
  text(`Site: ${log.site.name} (time zone ${tz})`);
  text(`Box: ${log.box.name} (${log.box.kind})`);
  text(`Period: ${log.from} to ${log.to}`);
  text(`Limit used: ${log.limitC.toFixed(1)} °C (${toF(log.limitC).toFixed(1)} °F)`);
  text(`Limit source: ${log.limitSource}`);
  text(`Plan: a reading every ${log.intervalH} h of local time; the nearest stored reading within ${log.toleranceMin} min stands for each time.`);
  text(`Figures: ${log.sourceNote}`);
  doc.moveDown(0.4).font('Helvetica-Bold');
  text('Box air is not product temperature.');
  doc.font('Helvetica');
  text(log.statement);
  doc.moveDown(0.6);

  const readingCols = [70, 150, 180, 132];
  const exCols = [130, 130, 70, 110, 92];
  const entryCols = [34, 92, 200, 96, 110];
  for (const d of log.days) {
    ensure(80);
    doc.moveTo(MARGIN, doc.y).lineTo(MARGIN + width, doc.y).stroke();
    doc.moveDown(0.3).font('Helvetica-Bold').fontSize(11);
    text(`${d.day}  -  ${SOURCE_WORDS[d.source]}${d.doubtedReadings ? ` (${d.doubtedReadings} readings left out: box-air sensor flagged)` : ''}`);
    doc.font('Helvetica').fontSize(9);
    text(`Min ${temp(d.minC)}   Max ${temp(d.maxC)}   ${d.signedOff ? `Signed off by ${d.signedOff.byName} at ${t(d.signedOff.at)}` : 'Not signed off'}`);
    doc.moveDown(0.2);
    cells(['Scheduled', 'Reading time', 'Box air', 'Above limit'], readingCols, true);
    for (const s of d.scheduled) cells([s.label, s.readingAt ? t(s.readingAt) : 'no reading', temp(s.boxAirC), s.boxAirC !== null && s.boxAirC > log.limitC ? 'ABOVE LIMIT' : ''], readingCols);
    doc.moveDown(0.3);
    if (d.excursions.length === 0) text('Excursions above the limit: none.');
    else {
      doc.font('Helvetica-Bold').fontSize(9);
      text(`Excursions above the limit: ${d.excursions.length}`);
      cells(['Start', 'End', 'Duration', 'Peak', 'Note'], exCols, true);
      for (const e of d.excursions) {
        const note = [e.open ? 'still above at end of data' : '', e.longestGapMin > 15 ? `gap ${e.longestGapMin} min` : ''].filter(Boolean).join('; ');
        cells([t(e.start), e.end ? t(e.end) : 'open', `${e.durationMin} min`, temp(e.peakC), note], exCols);
      }
    }
    doc.moveDown(0.3);
    if (d.entries.length === 0) text('Corrective actions and notes: none.');
    else {
      doc.font('Helvetica-Bold').fontSize(9);
      text('Corrective actions, notes, corrections and sign-offs');
      cells(['#', 'Kind', 'What was done', 'By', 'When'], entryCols, true);
      for (const e of d.entries) {
        const what = [e.text, e.productProbeC !== null ? `(product probe ${temp(e.productProbeC)})` : '', e.refersToId ? `(corrects #${e.refersToId})` : '', e.correctedBy.length ? `(corrected by #${e.correctedBy.join(', #')})` : '']
          .filter(Boolean)
          .join(' ');
        cells([String(e.id), e.kind, what, e.byName, `${t(e.at)}${e.recordedAt !== e.at ? `\nrecorded ${t(e.recordedAt)}` : ''}`], entryCols);
      }
    }
    doc.moveDown(0.8);
  }
  doc.end();
  return done;
}
