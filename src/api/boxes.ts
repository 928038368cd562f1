import type { Page } from '@shared/schemas/common';
import type { BoxCreateBody, BoxDto, BoxUpdateBody, ControllerCreateBody, ControllerSummary, ControllerUpdateBody } from '@shared/schemas/boxes';
import type { ReadingDto, ReadingsResponse, Resolution } from '@shared/schemas/live';
import type { BoxSettingsBody, SettingsChangeDto } from '@shared/schemas/settings';
import { http, type Query } from './http';

export interface ProvisionAnswer {
  controller: ControllerSummary;
  /** Shown once; the server keeps only a hash. */
  deviceSecret: string;
}

export const boxesApi = {
  /** `siteId` filters to one site; `hasController: 'false'` keeps the boxes still without a controller. */
  list: (q: Query & { siteId?: number | null; hasController?: 'true' | 'false' } = {}) => http.get<Page<BoxDto>>('/boxes', q),
  get: (id: number) => http.get<BoxDto>(`/boxes/${id}`),
  create: (body: BoxCreateBody) => http.post<BoxDto>('/boxes', body),
  update: (id: number, body: BoxUpdateBody) => http.patch<BoxDto>(`/boxes/${id}`, body),
  remove: (id: number) => http.del(`/boxes/${id}`),
  latest: (id: number) => http.get<ReadingDto>(`/boxes/${id}/latest`),
  readings: (id: number, q: { from: string; to: string; resolution?: Resolution }, signal?: AbortSignal) =>
    http.get<ReadingsResponse>(`/boxes/${id}/readings`, { resolution: 'auto', ...q }, signal),
  putSettings: (id: number, body: BoxSettingsBody) => http.put<SettingsChangeDto>(`/boxes/${id}/settings`, body),
  settingsChanges: (id: number) => http.get<SettingsChangeDto[]>(`/boxes/${id}/settings/changes`),
};

/** A row of GET /controllers (server/controllers/service.ts `ControllerListItem`): the summary and where it is installed. */
export interface ControllerListItem extends ControllerSummary {
  boxId: number;
  boxName: string;
  siteId: number;
  siteName: string;
  customerId: number;
  customerName: string;
  secretRotatedAt: string | null;
  createdAt: string;
}

export const controllersApi = {
  /** Admin list; `boxId` and `customerId` filter, `q` searches serial, box and site. */
  list: (q: Query & { boxId?: number; customerId?: number } = {}) => http.get<Page<ControllerListItem>>('/controllers', q),
  /** Changes the declared transducer reference. */
  update: (id: number, body: ControllerUpdateBody) => http.patch<ControllerSummary>(`/controllers/${id}`, body),
  provision: (body: ControllerCreateBody) => http.post<ProvisionAnswer>('/controllers', body),
  rotateSecret: (id: number) => http.post<ProvisionAnswer>(`/controllers/${id}/rotate-secret`),
  disable: (id: number) => http.post<ControllerSummary>(`/controllers/${id}/disable`),
  enable: (id: number) => http.post<ControllerSummary>(`/controllers/${id}/enable`),
};
