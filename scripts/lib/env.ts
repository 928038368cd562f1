/** First-run `.env`: copied from `.env.example` with every GENERATED secret replaced by a random one. */
import { randomBytes } from 'node:crypto';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';

/** Creates `<root>/.env` when missing; returns true when it was created. */
export function ensureEnvFile(root: string): boolean {
  const target = path.join(root, '.env');
  if (existsSync(target)) return false;
  const example = readFileSync(path.join(root, '.env.example'), 'utf8');
  const filled = example.replace(/=GENERATED$/gm, () => `=${randomBytes(24).toString('base64url')}`);
  writeFileSync(target, filled, { mode: 0o600 });
  return true;
}
