/** Data access for Web Push: the install's VAPID keys and users' subscriptions (raw SQL, plain objects). */
import { createHash } from 'node:crypto';
import { QueryTypes, type Sequelize } from 'sequelize';
import webpush from 'web-push';
import type { PushSubscriptionDto } from '../../shared/schemas/push';

export interface VapidKeys {
  publicKey: string;
  privateKey: string;
}

export interface StoredSubscription {
  id: number;
  userId: number;
  endpoint: string;
  p256dh: string;
  auth: string;
  label: string;
  createdAt: Date;
  lastSentAt: Date | null;
}

interface SubscriptionRow {
  id: number;
  user_id: number;
  endpoint: string;
  p256dh: string;
  auth: string;
  label: string;
  created_at: Date;
  last_sent_at: Date | null;
}

const COLUMNS = 'id, user_id, endpoint, p256dh, auth, label, created_at, last_sent_at';
/** UTC string for raw replacements (the driver would format a Date in the process zone). */
const sqlTime = (d: Date) => d.toISOString().replace('T', ' ').slice(0, 23);
const endpointHash = (endpoint: string) => createHash('sha256').update(endpoint).digest('hex');

function fromRow(r: SubscriptionRow): StoredSubscription {
  return { id: r.id, userId: r.user_id, endpoint: r.endpoint, p256dh: r.p256dh, auth: r.auth, label: r.label, createdAt: new Date(r.created_at), lastSentAt: r.last_sent_at ? new Date(r.last_sent_at) : null };
}

/** The VAPID key pair of this install: read, or generated and stored on first start (a race keeps the first). */
export async function loadOrCreateVapidKeys(sequelize: Sequelize): Promise<VapidKeys> {
  const read = async () => (await sequelize.query<{ public_key: string; private_key: string }>('SELECT public_key, private_key FROM push_keys WHERE id = 1', { type: QueryTypes.SELECT }))[0];
  const found = await read();
  if (found) return { publicKey: found.public_key, privateKey: found.private_key };
  const fresh = webpush.generateVAPIDKeys();
  await sequelize.query('INSERT IGNORE INTO push_keys (id, public_key, private_key, created_at) VALUES (1, ?, ?, ?)', { type: QueryTypes.INSERT, replacements: [fresh.publicKey, fresh.privateKey, sqlTime(new Date())] });
  const kept = await read();
  if (!kept) throw new Error('push_keys: the VAPID key pair was not stored');
  return { publicKey: kept.public_key, privateKey: kept.private_key };
}

/** Stores a subscription for a user; the same endpoint again (same browser) replaces the old row. */
export async function saveSubscription(sequelize: Sequelize, userId: number, s: { endpoint: string; p256dh: string; auth: string; label: string }): Promise<StoredSubscription> {
  const hash = endpointHash(s.endpoint);
  await sequelize.query(
    `INSERT INTO push_subscriptions (user_id, endpoint, endpoint_hash, p256dh, auth, label, created_at, last_sent_at) VALUES (?, ?, ?, ?, ?, ?, ?, NULL)
     ON DUPLICATE KEY UPDATE user_id = VALUES(user_id), p256dh = VALUES(p256dh), auth = VALUES(auth), label = VALUES(label), created_at = VALUES(created_at), last_sent_at = NULL`,
    { type: QueryTypes.INSERT, replacements: [userId, s.endpoint, hash, s.p256dh, s.auth, s.label, sqlTime(new Date())] },
  );
  const rows = await sequelize.query<SubscriptionRow>(`SELECT ${COLUMNS} FROM push_subscriptions WHERE endpoint_hash = ?`, { type: QueryTypes.SELECT, replacements: [hash] });
  if (!rows[0]) throw new Error('push_subscriptions: the subscription was not stored');
  return fromRow(rows[0]);
}

/** Every subscription of some users, oldest first. */
export async function subscriptionsOf(sequelize: Sequelize, userIds: readonly number[]): Promise<StoredSubscription[]> {
  if (userIds.length === 0) return [];
  const rows = await sequelize.query<SubscriptionRow>(`SELECT ${COLUMNS} FROM push_subscriptions WHERE user_id IN (?) ORDER BY id`, { type: QueryTypes.SELECT, replacements: [userIds] });
  return rows.map(fromRow);
}

/** Deletes one subscription, only when it is the user's (null: any user's); returns whether a row went. */
export async function deleteSubscription(sequelize: Sequelize, id: number, userId: number | null): Promise<boolean> {
  const n = await sequelize.query(`DELETE FROM push_subscriptions WHERE id = ?${userId === null ? '' : ' AND user_id = ?'}`, { type: QueryTypes.BULKDELETE, replacements: userId === null ? [id] : [id, userId] });
  return Number(n) > 0;
}

/** Deletes the subscriptions whose endpoint starts with a prefix (a restarted fake push service's); returns how many. */
export async function deleteSubscriptionsWithPrefix(sequelize: Sequelize, prefix: string): Promise<number> {
  const n = await sequelize.query('DELETE FROM push_subscriptions WHERE endpoint LIKE ?', { type: QueryTypes.BULKDELETE, replacements: [`${prefix.replace(/[\\%_]/g, (c) => `\\${c}`)}%`] });
  return Number(n);
}

/** Records a successful push to a subscription. */
export async function markSent(sequelize: Sequelize, id: number, at: Date): Promise<void> {
  await sequelize.query('UPDATE push_subscriptions SET last_sent_at = ? WHERE id = ?', { type: QueryTypes.UPDATE, replacements: [sqlTime(at), id] });
}

/** The answer shape of a subscription (no keys, only the push service's origin). */
export function toSubscriptionDto(s: StoredSubscription): PushSubscriptionDto {
  let service = '';
  try {
    service = new URL(s.endpoint).host;
  } catch {
    service = '(unreadable endpoint)';
  }
  return { id: s.id, label: s.label, service, createdAt: s.createdAt.toISOString(), lastSentAt: s.lastSentAt?.toISOString() ?? null };
}
