import type { PushInboxMessage, PushKeyDto, PushSubscriptionBody, PushSubscriptionDto, PushDeviceBody } from '@shared/schemas/push';
import { http } from './http';

/** Web Push: the server's VAPID key, the signed-in user's devices, and the dev push inbox (PUSH_FAKE=1). */
export const pushApi = {
  key: () => http.get<PushKeyDto>('/push/key'),
  subscriptions: () => http.get<PushSubscriptionDto[]>('/push/subscriptions'),
  subscribe: (body: PushSubscriptionBody) => http.post<PushSubscriptionDto>('/push/subscriptions', body),
  remove: (id: number) => http.del(`/push/subscriptions/${id}`),
  /** Admins, with the fake push service on: what it received and decrypted, newest first. */
  inbox: () => http.get<PushInboxMessage[]>('/dev/push-inbox'),
  /** Admins, with the fake push service on: a virtual phone for a user. */
  addVirtualDevice: (body: Partial<PushDeviceBody> & { userId: number }) => http.post<PushSubscriptionDto>('/dev/push-devices', body),
};
