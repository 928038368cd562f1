import type { Page } from '@shared/schemas/common';
import type { BoxTrendDto, SiteTrendDto, WeeklyReportDto, WeeklySendBody } from '@shared/schemas/trends';
import { API_BASE, http } from './http';

export const trendsApi = {
  box: (id: number, week?: string) => http.get<BoxTrendDto>(`/trends/boxes/${id}`, { week }),
  site: (id: number, week?: string) => http.get<SiteTrendDto>(`/trends/sites/${id}`, { week }),
  /** The CSV export's URL (a plain link downloads it with the session cookie). */
  csvUrl: (kind: 'boxes' | 'sites', id: number, week: string) => `${API_BASE}/trends/${kind}/${id}/export.csv?week=${encodeURIComponent(week)}`,
  /** Sent weekly reports, newest first (an admin sees all, anyone else their own), of one site when given. */
  reports: (siteId?: number) => http.get<Page<WeeklyReportDto>>('/reports/weekly', { siteId, pageSize: 50 }),
  sendReports: (body: WeeklySendBody) => http.post<{ results: Array<{ siteId: number; isoWeek: string; sent: number; failed: number; skipped: number }> }>('/reports/weekly/send', body),
};
