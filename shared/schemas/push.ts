/** Web Push: subscription bodies and answers, the payload of an alarm push, the dev push inbox. */
import { z } from 'zod';

const base64url = (name: string, bytes: number) =>
  z
    .string()
    .regex(/^[A-Za-z0-9_-]+={0,2}$/, `${name} must be base64url`)
    // ceil(bytes * 4 / 3) characters without padding (RFC 4648 §5).
    .refine((v) => v.replace(/=+$/, '').length === Math.ceil((bytes * 4) / 3), `${name} must encode ${bytes} bytes`);

/** `POST /api/v1/push/subscriptions`: what `PushSubscription.toJSON()` gives, plus a label for the device. */
export const PushSubscriptionBody = z.object({
  endpoint: z.string().trim().url('endpoint must be a URL').max(1000),
  keys: z.object({
    /** The browser's P-256 public key, uncompressed point (65 bytes, RFC 8291 §3.2). */
    p256dh: base64url('p256dh', 65),
    /** The 16-byte authentication secret (RFC 8291 §3.2). */
    auth: base64url('auth', 16),
  }),
  label: z.string().trim().min(1).max(120),
  /** Sent by browsers, unused: subscriptions here do not expire on a date. */
  expirationTime: z.number().nullable().optional(),
});
export type PushSubscriptionBody = z.infer<typeof PushSubscriptionBody>;

/** One of the signed-in user's push subscriptions (the keys are not sent back). */
export interface PushSubscriptionDto {
  id: number;
  label: string;
  /** Scheme and host of the endpoint: which push service delivers to the device. */
  service: string;
  createdAt: string;
  lastSentAt: string | null;
}

/** `GET /api/v1/push/key`: the VAPID public key the browser subscribes with (RFC 8292 §3.2). */
export interface PushKeyDto {
  publicKey: string;
}

/** What an alarm push carries, encrypted end to end (RFC 8291); the service worker shows it. */
export const AlarmPushPayload = z.object({
  alarmId: z.number().int().positive(),
  title: z.string(),
  body: z.string(),
  priority: z.enum(['low', 'medium', 'high', 'critical']),
  /** A fresh single-use acknowledgement link (sign-in required). */
  ackUrl: z.string(),
  /** Notifications with the same tag replace each other on the device. */
  tag: z.string(),
});
export type AlarmPushPayload = z.infer<typeof AlarmPushPayload>;

/** `POST /api/v1/dev/push-devices` (demo, admin): give a user a virtual phone on the fake push service. */
export const PushDeviceBody = z.object({
  userId: z.number().int().positive(),
  label: z.string().trim().min(1).max(120).default('Virtual phone'),
});
export type PushDeviceBody = z.infer<typeof PushDeviceBody>;

/** One push the fake push service received and decrypted (`GET /api/v1/dev/push-inbox`). */
export interface PushInboxMessage {
  id: number;
  deviceId: string;
  deviceLabel: string;
  /** ISO 8601, UTC. */
  receivedAt: string;
  ttlS: number;
  urgency: string | null;
  topic: string | null;
  /** The decrypted payload as text (null when it could not be decrypted). */
  text: string | null;
  /** Why decryption failed, or null. */
  error: string | null;
}
