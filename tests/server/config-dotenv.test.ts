/**
 * DEVELOPERS.md: the tests never read a developer's `.env` (NODE_ENV=test skips it), while every other
 * run of the server does. Checked in child processes that load the config with a prepared env file.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { PROJECT_ROOT } from '../../server/config';

const file = path.join(mkdtempSync(path.join(os.tmpdir(), 'rimehold-envfile-')), '.env');
writeFileSync(file, 'MQTT_EMBEDDED_IN=inline\n');

/** MQTT_EMBEDDED_IN as the config of a fresh process sees it, with the env file and NODE_ENV given. */
function embeddedIn(nodeEnv: string): string {
  const env: NodeJS.ProcessEnv = { ...process.env, NODE_ENV: nodeEnv, RIMEHOLD_ENV_FILE: file };
  delete env.MQTT_EMBEDDED_IN;
  const code = "const { loadConfig } = await import('./server/config.ts'); console.log(loadConfig(process.env).MQTT_EMBEDDED_IN);";
  const r = spawnSync(process.execPath, ['--import', 'tsx', '--input-type=module', '-e', code], { cwd: PROJECT_ROOT, env, encoding: 'utf8', timeout: 60_000 });
  if (r.status !== 0) throw new Error(r.stderr);
  return r.stdout.trim();
}

describe('the env file', () => {
  it('is not read when NODE_ENV=test', () => {
    expect(embeddedIn('test')).toBe('process');
  });
  it('is read otherwise (so the check above can fail)', () => {
    expect(embeddedIn('development')).toBe('inline');
  });
});
