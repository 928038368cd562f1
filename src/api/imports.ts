/** CSV import of boxes with their controllers: dry run, import (all or nothing), template, secrets file. */
import type { ImportReport, ImportResult, ImportedSecret } from '@shared/schemas/imports';
import { useSessionStore } from '@/stores/session';
import { ApiError, buildUrl, errorFromResponse } from './http';

/** Where the template is downloaded from (a plain link: the browser saves it). */
export const IMPORT_TEMPLATE_URL = buildUrl('/imports/boxes/template.csv');

/** What an import came to: stored (with the secrets, once) or refused with the row report. */
export type ImportOutcome = { kind: 'imported'; result: ImportResult } | { kind: 'rejected'; report: ImportReport };

function isReport(v: unknown): v is ImportReport {
  return typeof v === 'object' && v !== null && Array.isArray((v as { rows?: unknown }).rows) && typeof (v as { counts?: unknown }).counts === 'object';
}

/**
 * Sends the file as multipart/form-data (field `file`). The JSON wrapper in http.ts cannot carry a
 * FormData body, so this sends its own request with the same CSRF header and error mapping.
 */
async function send(file: File, dryRun: boolean): Promise<Response> {
  const body = new FormData();
  body.append('file', file, file.name);
  const headers: Record<string, string> = { accept: 'application/json, application/problem+json' };
  const token = useSessionStore().csrfToken;
  if (token) headers['x-csrf-token'] = token;
  try {
    return await fetch(buildUrl('/imports/boxes', dryRun ? { dryRun: 1 } : undefined), { method: 'POST', headers, body, credentials: 'same-origin' });
  } catch {
    throw new ApiError({ status: 0, title: 'Network error' });
  }
}

export const importsApi = {
  /** Checks the file row by row; stores nothing. */
  async dryRun(file: File): Promise<ImportReport> {
    const res = await send(file, true);
    if (!res.ok) throw await errorFromResponse(res);
    return (await res.json()) as ImportReport;
  },
  /** Imports every row or none; a refused import (422 with a row report) resolves as `rejected`. */
  async importBoxes(file: File): Promise<ImportOutcome> {
    const res = await send(file, false);
    if (res.ok) return { kind: 'imported', result: (await res.json()) as ImportResult };
    if (res.status === 422) {
      const body: unknown = await res
        .clone()
        .json()
        .catch(() => null);
      const report = typeof body === 'object' && body !== null ? (body as { report?: unknown }).report : undefined;
      if (isReport(report)) return { kind: 'rejected', report };
    }
    throw await errorFromResponse(res);
  },
};

/** The new controllers' secrets as CSV text (`serial,secret`), for the one-time download. */
export function secretsCsv(secrets: readonly ImportedSecret[]): string {
  const cell = (v: string) => (/[",\r\n]/.test(v) ? `"${v.replace(/"/g, '""')}"` : v);
  return ['serial,secret', ...secrets.map((s) => `${cell(s.serial)},${cell(s.deviceSecret)}`)].join('\r\n') + '\r\n';
}
