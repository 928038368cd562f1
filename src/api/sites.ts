import type { Page } from '@shared/schemas/common';
import type { SiteBody, SiteDto } from '@shared/schemas/customers';
import { http, type Query } from './http';

export const sitesApi = {
  /** `customerId` filters to one customer. */
  list: (q: Query & { customerId?: number | null } = {}) => http.get<Page<SiteDto>>('/sites', q),
  get: (id: number) => http.get<SiteDto>(`/sites/${id}`),
  create: (body: SiteBody) => http.post<SiteDto>('/sites', body),
  update: (id: number, body: Partial<SiteBody>) => http.patch<SiteDto>(`/sites/${id}`, body),
  remove: (id: number) => http.del(`/sites/${id}`),
};
