/**
 * Reading an uploaded import file: the bytes must be UTF-8 text (a file is judged by what it
 * holds, not by its name or declared type), then csv-parse reads the rows with the columns named
 * by the header row.
 */
import { parse } from 'csv-parse/sync';
import { HttpProblem, problems } from '../http/problem';
import { IMPORT_COLUMNS, IMPORT_MAX_ROWS, IMPORT_REQUIRED_COLUMNS, ImportCsvRow, type ImportColumn } from '../../shared/schemas/imports';

/** Declared types a CSV upload arrives with: browsers send text/csv, Windows often the spreadsheet type, some nothing at all. */
const CSV_MIME_TYPES = new Set(['text/csv', 'application/csv', 'text/plain', 'application/vnd.ms-excel', 'application/octet-stream', '']);

const notText = (detail: string) => new HttpProblem(415, 'unsupported-media', 'Not a CSV text file', detail);

/** True when the declared MIME type (parameters ignored) is one a CSV file is sent with. */
export function isCsvMimeType(mime: string | undefined): boolean {
  return CSV_MIME_TYPES.has((mime ?? '').split(';')[0]?.trim().toLowerCase() ?? '');
}

// C0 controls other than tab, LF and CR never occur in a text CSV; NUL is the sign of a binary file.
// eslint-disable-next-line no-control-regex
const CONTROL_CHARS = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\u007F]/;

/** Decodes an upload as UTF-8 text (BOM dropped), or throws a 415 problem for binary or non-UTF-8 bytes. */
export function decodeCsvText(bytes: Buffer): string {
  if (bytes.includes(0)) throw notText('The file holds NUL bytes, so it is not a text file. Save the sheet as "CSV UTF-8" and upload that.');
  let text: string;
  try {
    text = new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    throw notText('The file is not valid UTF-8 text. Save the sheet as "CSV UTF-8" and upload that.');
  }
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  const bad = CONTROL_CHARS.exec(text);
  if (bad) throw notText(`The file holds a control character (U+${bad[0].charCodeAt(0).toString(16).padStart(4, '0').toUpperCase()}), so it is not a CSV text file.`);
  return text;
}

/** One data row with its line number in the file (the header is line 1). */
export interface CsvDataRow {
  line: number;
  cells: ImportCsvRow;
  /** Set when the row has more or fewer cells than the header. */
  cellCountProblem: string | null;
}

const normalizeHeader = (h: string) => h.trim().toLowerCase().replace(/\s+/g, '_');

function checkHeader(names: string[]): void {
  const known = new Set<string>(IMPORT_COLUMNS);
  const unknown = names.filter((n) => !known.has(n));
  const missing = IMPORT_REQUIRED_COLUMNS.filter((c) => !names.includes(c));
  const repeated = names.filter((n, i) => names.indexOf(n) !== i);
  const errors: Record<string, string[]> = {};
  if (unknown.length) errors.unknown = unknown.map((n) => `Unknown column "${n || '(empty)'}"`);
  if (missing.length) errors.missing = missing.map((n) => `Missing column "${n}"`);
  if (repeated.length) errors.repeated = repeated.map((n) => `Column "${n}" appears twice`);
  if (Object.keys(errors).length === 0) return;
  const detail = `The header row must name the template's columns (${IMPORT_COLUMNS.join(', ')}). ${Object.values(errors).flat().join('; ')}.`;
  throw problems.unprocessable('import-header', 'The header row does not match the template', detail, errors);
}

interface ParsedRecord {
  record: Partial<Record<ImportColumn, string>>;
  info: { lines: number; error?: { code?: string; record?: unknown[] } };
}

/** Parses CSV text into data rows (header from the first line); 422 for a malformed file, 413 beyond IMPORT_MAX_ROWS rows. */
export function parseImportCsv(text: string): CsvDataRow[] {
  let columnCount = 0;
  let records: ParsedRecord[];
  try {
    records = parse(text, {
      columns: (header: string[]) => {
        const names = header.map(normalizeHeader);
        checkHeader(names);
        columnCount = names.length;
        return names;
      },
      info: true,
      relax_column_count: true,
      skip_empty_lines: true,
      trim: true,
    }) as ParsedRecord[];
  } catch (err) {
    if (err instanceof HttpProblem) throw err;
    const e = err as { code?: string; lines?: number; message?: string };
    const where = typeof e.lines === 'number' ? ` (line ${e.lines})` : '';
    throw problems.unprocessable('import-csv', 'The file is not valid CSV', `The file could not be read as CSV${where}: ${(e.message ?? 'parse error').slice(0, 200)}`);
  }
  if (columnCount === 0) throw problems.unprocessable('import-header', 'The file is empty', `The file has no header row; start from the template (${IMPORT_COLUMNS.join(', ')}).`);
  if (records.length > IMPORT_MAX_ROWS) {
    throw new HttpProblem(413, 'too-large', 'Too many rows', `The file has ${records.length} rows; one import takes at most ${IMPORT_MAX_ROWS}. Split it into several files.`);
  }
  return records.map(({ record, info }) => {
    // info.lines is the line where the record ends; a quoted cell may span lines.
    const innerBreaks = Object.values(record).reduce((n, v) => n + (typeof v === 'string' ? (v.match(/\n/g)?.length ?? 0) : 0), 0);
    const given = info.error?.record?.length;
    const cellCountProblem =
      info.error?.code === 'CSV_RECORD_INCONSISTENT_COLUMNS' && given !== undefined ? `The row has ${given} cells; the header has ${columnCount}.` : null;
    return { line: info.lines - innerBreaks, cells: ImportCsvRow.parse(record), cellCountProblem };
  });
}
