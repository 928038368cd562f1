import type { Page } from '@shared/schemas/common';
import type { UserCreateBody, UserDto, UserUpdateBody } from '@shared/schemas/users';
import { http, type Query } from './http';

export const usersApi = {
  list: (q: Query = {}) => http.get<Page<UserDto>>('/users', q),
  get: (id: number) => http.get<UserDto>(`/users/${id}`),
  create: (body: UserCreateBody) => http.post<UserDto>('/users', body),
  update: (id: number, body: UserUpdateBody) => http.patch<UserDto>(`/users/${id}`, body),
  invite: (id: number) => http.post<UserDto>(`/users/${id}/invite`),
};
