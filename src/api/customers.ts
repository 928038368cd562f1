import type { Page } from '@shared/schemas/common';
import type { CustomerBody, CustomerDto } from '@shared/schemas/customers';
import { http, type Query } from './http';

export const customersApi = {
  list: (q: Query = {}) => http.get<Page<CustomerDto>>('/customers', q),
  get: (id: number) => http.get<CustomerDto>(`/customers/${id}`),
  create: (body: CustomerBody) => http.post<CustomerDto>('/customers', body),
  update: (id: number, body: Partial<CustomerBody>) => http.patch<CustomerDto>(`/customers/${id}`, body),
  remove: (id: number) => http.del(`/customers/${id}`),
};
