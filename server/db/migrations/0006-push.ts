/**
 * Web Push: the server's VAPID key pair (generated at first start, then kept) and each user's
 * push subscriptions (one per browser or phone that turned notifications on).
 */
import type { Migration } from '../migrate';

const TABLES = [
  `CREATE TABLE push_keys (
    id TINYINT UNSIGNED NOT NULL PRIMARY KEY COMMENT 'always 1: one VAPID key pair per install',
    public_key VARCHAR(100) NOT NULL COMMENT 'P-256 point, uncompressed, base64url (RFC 8292)',
    private_key VARCHAR(100) NOT NULL COMMENT 'P-256 scalar, base64url',
    created_at DATETIME(3) NOT NULL
  ) ENGINE=InnoDB`,
  `CREATE TABLE push_subscriptions (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    user_id INT UNSIGNED NOT NULL,
    endpoint VARCHAR(1000) NOT NULL,
    endpoint_hash CHAR(64) NOT NULL COMMENT 'SHA-256 hex of endpoint: one row per browser',
    p256dh VARCHAR(120) NOT NULL COMMENT 'user agent public key, base64url (RFC 8291)',
    auth VARCHAR(40) NOT NULL COMMENT 'auth secret, base64url (RFC 8291)',
    label VARCHAR(120) NOT NULL,
    created_at DATETIME(3) NOT NULL,
    last_sent_at DATETIME(3) NULL,
    UNIQUE KEY ux_push_endpoint (endpoint_hash),
    KEY ix_push_user (user_id),
    CONSTRAINT fk_push_user FOREIGN KEY (user_id) REFERENCES users(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
];

export const up: Migration = async ({ context }) => {
  for (const sql of TABLES) await context.sequelize.query(sql);
};

export const down: Migration = async ({ context }) => {
  for (const t of ['push_subscriptions', 'push_keys']) await context.sequelize.query(`DROP TABLE IF EXISTS ${t}`);
};
