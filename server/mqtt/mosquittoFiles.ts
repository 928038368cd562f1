/**
 * Where a project-local mosquitto keeps its files, and the dynamic-security admin secret that the
 * starter (scripts/lib/mosquitto.ts) writes and the server (server/mqtt/mosquittoAccounts.ts) reads.
 */
import { pbkdf2Sync, randomBytes } from 'node:crypto';
import { chmodSync, existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';

/** The dynamic-security plugin's own admin account: it may use only the control topic. */
export const DYNSEC_ADMIN_USER = 'rimehold-dynsec-admin';

/** Absolute paths of the files in a mosquitto data directory. */
export function mosquittoPaths(dir: string) {
  const d = path.resolve(dir);
  return {
    dir: d,
    config: path.join(d, 'mosquitto.conf'),
    dynsec: path.join(d, 'dynamic-security.json'),
    adminSecret: path.join(d, 'dynsec-admin.secret'),
    pidFile: path.join(d, 'mosquitto.pid'),
    log: path.join(d, 'mosquitto.log'),
    /** mosquitto writes its persistence file here (trailing slash required by mosquitto). */
    persistenceLocation: `${d}${path.sep}`,
    persistenceFile: 'mosquitto.db',
  };
}

/** The admin secret kept in the data directory (created once, mode 0600); returns it. */
export function ensureAdminSecret(dir: string): string {
  const p = mosquittoPaths(dir);
  mkdirSync(p.dir, { recursive: true });
  if (!existsSync(p.adminSecret)) {
    writeFileSync(p.adminSecret, randomBytes(24).toString('base64url'), { mode: 0o600 });
    chmodSync(p.adminSecret, 0o600);
  }
  return readFileSync(p.adminSecret, 'utf8').trim();
}

/** The admin secret of a data directory, or a readable error when the broker was never set up there. */
export function readAdminSecret(dir: string): string {
  const p = mosquittoPaths(dir);
  if (!existsSync(p.adminSecret)) {
    throw new Error(`MQTT_BROKER=mosquitto but ${p.adminSecret} does not exist: start mosquitto with npm start (scripts/lib/mosquitto.ts) or point MOSQUITTO_DIR at its data directory`);
  }
  return readFileSync(p.adminSecret, 'utf8').trim();
}

/**
 * The initial dynamic-security file: only the admin account, and every access denied by default.
 * The password is stored the way the plugin stores it: PBKDF2-SHA512 over the raw salt bytes,
 * 64-byte key, base64 (checked against `mosquitto_ctrl dynsec init` of mosquitto 2.0.11).
 */
export function initialDynsecJson(adminPassword: string): string {
  const salt = randomBytes(12);
  const iterations = 101;
  const hash = pbkdf2Sync(adminPassword, salt, iterations, 64, 'sha512');
  const CONTROL = '$CONTROL/dynamic-security/#';
  return JSON.stringify(
    {
      clients: [{ username: DYNSEC_ADMIN_USER, textName: 'Rimehold account manager', password: hash.toString('base64'), salt: salt.toString('base64'), iterations, roles: [{ rolename: 'rimehold-dynsec-admin' }] }],
      roles: [
        {
          rolename: 'rimehold-dynsec-admin',
          acls: [
            { acltype: 'publishClientSend', topic: CONTROL, allow: true },
            { acltype: 'publishClientReceive', topic: CONTROL, allow: true },
            { acltype: 'subscribePattern', topic: CONTROL, allow: true },
            { acltype: 'unsubscribePattern', topic: CONTROL, allow: true },
          ],
        },
      ],
      groups: [],
      // Nothing is allowed unless a role says so (receiving included, so a role must name what its
      // client may be delivered).
      defaultACLAccess: { publishClientSend: false, publishClientReceive: false, subscribe: false, unsubscribe: true },
    },
    null,
    2,
  );
}
