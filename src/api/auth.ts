import type { LoginBody, PreferencesBody, SessionInfo, SessionUser, SetPasswordBody } from '@shared/schemas/auth';
import { http } from './http';

export const authApi = {
  csrf: () => http.get<{ csrfToken: string }>('/auth/csrf'),
  login: (body: LoginBody, csrfToken?: string) => http.post<SessionInfo>('/auth/login', body, { csrfToken }),
  logout: () => http.post<void>('/auth/logout'),
  me: () => http.get<SessionInfo>('/auth/me'),
  setPreferences: (body: PreferencesBody) => http.put<SessionUser>('/auth/me/preferences', body),
  setPassword: (body: SetPasswordBody, csrfToken?: string) => http.post<void>('/auth/set-password', body, { csrfToken }),
};
