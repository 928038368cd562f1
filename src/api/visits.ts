/** Service visits: list, detail, create, change, close, and photo/PDF uploads (multipart). */
import type { Page } from '@shared/schemas/common';
import type { AttachmentDto, VisitCloseResult, VisitCreateBody, VisitDto, VisitUpdateBody } from '@shared/schemas/visits';
import { useSessionStore } from '@/stores/session';
import { ApiError, buildUrl, errorFromResponse, http, type Query } from './http';

export const visitsApi = {
  list: (q: Query & { boxId?: number; siteId?: number; status?: 'open' | 'closed' } = {}) => http.get<Page<VisitDto>>('/visits', q),
  get: (id: number) => http.get<VisitDto>(`/visits/${id}`),
  create: (body: VisitCreateBody) => http.post<VisitDto>('/visits', body),
  update: (id: number, body: VisitUpdateBody) => http.patch<VisitDto>(`/visits/${id}`, body),
  close: (id: number, acknowledgeAlarms: boolean) => http.post<VisitCloseResult>(`/visits/${id}/close`, { acknowledgeAlarms }),
  /**
   * Uploads photos or PDFs in the field `files`. The JSON wrapper cannot carry FormData, so this
   * sends its own request with the same CSRF header and error mapping (as src/api/imports.ts does).
   */
  async upload(id: number, files: readonly File[]): Promise<AttachmentDto[]> {
    const body = new FormData();
    for (const f of files) body.append('files', f, f.name);
    const headers: Record<string, string> = { accept: 'application/json, application/problem+json' };
    const token = useSessionStore().csrfToken;
    if (token) headers['x-csrf-token'] = token;
    let res: Response;
    try {
      res = await fetch(buildUrl(`/visits/${id}/attachments`), { method: 'POST', headers, body, credentials: 'same-origin' });
    } catch {
      throw new ApiError({ status: 0, title: 'Network error' });
    }
    if (!res.ok) throw await errorFromResponse(res);
    return (await res.json()) as AttachmentDto[];
  },
};
