/**
 * Rimehold installs and starts from any path: the scripts find the project root from their own
 * module URL, decoded, so a checkout under a dot folder or a folder with a space works.
 */
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import dotenv from 'dotenv';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PROJECT_ROOT } from '../../server/config';
import { ensureEnvFile } from '../../scripts/lib/env';
import { projectRootFrom } from '../../scripts/lib/root';

let tmpBase: string;
/** A project root like `/tmp/x/.dot dir/p`. */
let root: string;

beforeAll(() => {
  tmpBase = mkdtempSync(path.join(os.tmpdir(), 'rimehold-install-'));
  root = path.join(tmpBase, '.dot dir', 'p');
  mkdirSync(path.join(root, 'scripts', 'lib'), { recursive: true });
});
afterAll(() => rmSync(tmpBase, { recursive: true, force: true }));

describe('projectRootFrom', () => {
  it('decodes a file URL with a space and keeps the dot folder', () => {
    const moduleUrl = pathToFileURL(path.join(root, 'scripts', 'lib', 'prepare.ts')).href;
    expect(moduleUrl).toContain('%20'); // the URL form is percent-encoded …
    expect(projectRootFrom(moduleUrl, 2)).toBe(root); // … the root is the real directory
    expect(projectRootFrom(pathToFileURL(path.join(root, 'scripts', 'test.ts')).href, 1)).toBe(root);
  });

  it('gives the real root to a script module that lives in such a path', async () => {
    copyFileSync(path.join(PROJECT_ROOT, 'scripts', 'lib', 'root.ts'), path.join(root, 'scripts', 'lib', 'root.ts'));
    writeFileSync(path.join(root, 'scripts', 'lib', 'where.ts'), "import { projectRootFrom } from './root';\nexport const ROOT = projectRootFrom(import.meta.url, 2);\n");
    const mod = (await import(pathToFileURL(path.join(root, 'scripts', 'lib', 'where.ts')).href)) as { ROOT: string };
    expect(mod.ROOT).toBe(root);
    expect(existsSync(path.join(mod.ROOT, 'scripts', 'lib', 'root.ts'))).toBe(true);
  });
});

describe('the start, dev and test scripts and the server', () => {
  it('take no path from a file URL\'s percent-encoded pathname', () => {
    const dirs = ['scripts', path.join('scripts', 'lib'), 'server'];
    const offenders: string[] = [];
    for (const dir of dirs) {
      const files = readdirSync(path.join(PROJECT_ROOT, dir), { recursive: dir === 'server' }).map(String).filter((f) => f.endsWith('.ts'));
      for (const file of files) {
        if (/new URL\(import\.meta\.url\)\.pathname/.test(readFileSync(path.join(PROJECT_ROOT, dir, file), 'utf8'))) offenders.push(path.join(dir, file));
      }
    }
    expect(offenders).toEqual([]);
  });
});

describe('ensureEnvFile in a path with a dot folder and a space', () => {
  it('creates .env from .env.example there with every GENERATED secret filled', () => {
    copyFileSync(path.join(PROJECT_ROOT, '.env.example'), path.join(root, '.env.example'));
    expect(ensureEnvFile(root)).toBe(true);
    const env = dotenv.parse(readFileSync(path.join(root, '.env')));
    const example = dotenv.parse(readFileSync(path.join(root, '.env.example')));
    const generated = Object.keys(example).filter((k) => example[k] === 'GENERATED');
    for (const key of generated) expect(env[key], key).toMatch(/^[\w-]{20,}$/);
    // A second start keeps the file it made.
    expect(ensureEnvFile(root)).toBe(false);
  });
});

describe('the project MariaDB instance in such a path', () => {
  it('hands mariadbd a short path without spaces that leads to the data directory', async () => {
    const { MariaInstance } = await import('../../scripts/lib/mariadb');
    const dataDir = path.join(root, '.data', 'mariadb');
    const instance = new MariaInstance({ dataDir, port: 1, bufferPoolMiB: 64, redoLogMiB: 16, log: () => undefined });
    const base = instance.baseDir;
    expect(base).not.toMatch(/\s/);
    // mariadb-install-db splits on spaces; a unix socket path must stay under ~108 bytes.
    expect(instance.socket.length).toBeLessThan(100);
    writeFileSync(path.join(base, 'probe'), 'x');
    expect(readFileSync(path.join(dataDir, 'probe'), 'utf8')).toBe('x');
    // A plain short path is used as it is.
    expect(new MariaInstance({ dataDir: '/tmp/plain', port: 1, bufferPoolMiB: 64, redoLogMiB: 16 }).baseDir).toBe('/tmp/plain');
  });
});
