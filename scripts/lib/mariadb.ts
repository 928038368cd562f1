/**
 * The project's own MariaDB instance: installs Debian's mariadb-server when missing, initialises a
 * data directory inside the project, runs mariadbd bound to 127.0.0.1 and creates the application
 * database and user. Used by `npm start`, `npm test` and the outage tests.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, readlinkSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { pidAlive, portOpen } from './ports';

export interface InstanceOptions {
  /** Absolute data directory, e.g. <project>/.data/mariadb. */
  dataDir: string;
  port: number;
  /** InnoDB buffer pool in MiB. */
  bufferPoolMiB: number;
  /** Redo log size in MiB. */
  redoLogMiB: number;
  log?: (line: string) => void;
}

export interface AppDatabase {
  name: string;
  user: string;
  password: string;
}

const MARIADBD_CANDIDATES = ['/usr/sbin/mariadbd', '/usr/bin/mariadbd', '/usr/sbin/mysqld'];

/** Path of the mariadbd binary, or null when MariaDB is not installed. */
export function findMariadbd(): string | null {
  for (const p of MARIADBD_CANDIDATES) if (existsSync(p)) return p;
  const which = spawnSync('sh', ['-c', 'command -v mariadbd || command -v mysqld'], { encoding: 'utf8' });
  const found = which.stdout.trim();
  return found.length > 0 ? found : null;
}

/** Installs mariadb-server from Debian's packages when mariadbd is missing; throws with advice when not root. */
export function ensureMariadbInstalled(log: (l: string) => void = console.log): string {
  const existing = findMariadbd();
  if (existing) return existing;
  if (typeof process.getuid === 'function' && process.getuid() !== 0) {
    throw new Error(
      'MariaDB is not installed and this user cannot install it. Install it with\n' +
        '  sudo apt-get install -y mariadb-server\n' +
        'or point Rimehold at an existing MariaDB by setting DB_EXTERNAL=1 with DB_HOST, DB_PORT, DB_NAME, DB_USER and DB_PASSWORD.',
    );
  }
  log('mariadbd not found: installing mariadb-server from Debian packages (apt-get)…');
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  for (const args of [['update', '-qq'], ['install', '-y', '-qq', 'mariadb-server']]) {
    const r = spawnSync('apt-get', args, { stdio: 'inherit', env });
    if (r.status !== 0) throw new Error(`apt-get ${args.join(' ')} failed with status ${r.status}`);
  }
  const bin = findMariadbd();
  if (!bin) throw new Error('mariadb-server was installed but mariadbd was not found');
  return bin;
}

/**
 * The settings we run the instance with, chosen for this workload: a write-heavy time series of
 * small rows plus light OLTP. flush_log_at_trx_commit=1 because the ingest acknowledges an MQTT
 * message only after its commit: a commit must be durable.
 */
export function instanceConfig(o: InstanceOptions): string {
  return [
    '[mariadbd]',
    `datadir=${o.dataDir}/data`,
    `socket=${o.dataDir}/mysqld.sock`,
    `pid-file=${o.dataDir}/mysqld.pid`,
    `log-error=${o.dataDir}/error.log`,
    'bind-address=127.0.0.1',
    `port=${o.port}`,
    'skip-name-resolve',
    'character-set-server=utf8mb4',
    'collation-server=utf8mb4_unicode_ci',
    "default-time-zone='+00:00'",
    `innodb_buffer_pool_size=${o.bufferPoolMiB}M`,
    `innodb_log_file_size=${o.redoLogMiB}M`,
    'innodb_flush_log_at_trx_commit=1',
    'innodb_flush_method=O_DIRECT',
    'max_allowed_packet=64M',
    'max_connections=200',
    'table_open_cache=2000',
    'skip-log-bin',
    '',
  ].join('\n');
}

/** A project-local mariadbd: start, stop, and run SQL as the local root over the socket. */
export class MariaInstance {
  private child: ChildProcess | null = null;
  /** True when this process started mariadbd (and so must stop it). */
  ownsProcess = false;
  private readonly log: (l: string) => void;

  constructor(readonly opts: InstanceOptions) {
    this.log = opts.log ?? ((l) => console.log(l));
  }

  /**
   * The directory mariadbd is given. mariadb-install-db is a shell script that splits paths on
   * spaces, and a unix socket path is limited to about 108 bytes: a data directory with a space
   * or a long path is reached through a short symlink in the temp directory instead.
   */
  get baseDir(): string {
    const dir = path.resolve(this.opts.dataDir);
    if (!/\s/.test(dir) && dir.length <= 80) return dir;
    const link = path.join(os.tmpdir(), `rimehold-mariadb-${createHash('sha1').update(dir).digest('hex').slice(0, 12)}`);
    let current: string | null = null;
    try {
      current = readlinkSync(link);
    } catch {
      current = null;
    }
    if (current !== dir) {
      mkdirSync(dir, { recursive: true });
      rmSync(link, { force: true });
      symlinkSync(dir, link, 'dir');
    }
    return link;
  }

  get socket(): string {
    return path.join(this.baseDir, 'mysqld.sock');
  }

  private get cnf(): string {
    return path.join(this.baseDir, 'my.cnf');
  }

  private get pidFile(): string {
    return path.join(this.baseDir, 'mysqld.pid');
  }

  /** The pid of a running instance on this data directory, if any. */
  runningPid(): number | null {
    if (!existsSync(this.pidFile)) return null;
    const pid = Number(readFileSync(this.pidFile, 'utf8').trim());
    return Number.isInteger(pid) && pid > 0 && pidAlive(pid) ? pid : null;
  }

  /** Initialises the data directory when empty, then starts mariadbd unless it already runs. */
  async start(): Promise<void> {
    const bin = ensureMariadbInstalled(this.log);
    mkdirSync(this.opts.dataDir, { recursive: true });
    writeFileSync(this.cnf, instanceConfig({ ...this.opts, dataDir: this.baseDir }));
    const dataDir = path.join(this.baseDir, 'data');
    if (!existsSync(path.join(dataDir, 'mysql'))) {
      this.log(`initialising MariaDB data directory ${dataDir}`);
      rmSync(dataDir, { recursive: true, force: true });
      const user = process.getuid?.() === 0 ? 'root' : (process.env.USER ?? 'nobody');
      const r = spawnSync(
        'mariadb-install-db',
        [`--defaults-file=${this.cnf}`, `--user=${user}`, '--auth-root-authentication-method=socket', '--skip-test-db'],
        { encoding: 'utf8' },
      );
      if (r.status !== 0) throw new Error(`mariadb-install-db failed: ${r.stderr || r.stdout}`);
    }
    if (this.runningPid() !== null && (await portOpen(this.opts.port))) {
      this.log(`reusing the MariaDB instance already running on 127.0.0.1:${this.opts.port}`);
      return;
    }
    if (await portOpen(this.opts.port)) {
      throw new Error(`port ${this.opts.port} is taken by another program; set DB_PORT to a free port`);
    }
    const args = [`--defaults-file=${this.cnf}`];
    if (process.getuid?.() === 0) args.push('--user=root');
    this.child = spawn(bin, args, { stdio: 'ignore', detached: false });
    // The server process runs on its own; do not keep the starting process alive for it.
    this.child.unref();
    this.ownsProcess = true;
    const exited = new Promise<number | null>((resolve) => this.child?.once('exit', (code) => resolve(code)));
    const deadline = Date.now() + 60_000;
    while (Date.now() < deadline) {
      if (await portOpen(this.opts.port)) return;
      const raced = await Promise.race([exited, new Promise((r) => setTimeout(() => r('wait'), 200))]);
      if (raced !== 'wait') {
        throw new Error(`mariadbd exited during start (code ${String(raced)}); see ${this.opts.dataDir}/error.log`);
      }
    }
    throw new Error(`mariadbd did not listen on ${this.opts.port} within 60 s; see ${this.opts.dataDir}/error.log`);
  }

  /** Stops mariadbd if this process (or, with force, anyone) started it; waits for a clean exit. */
  async stop(force = false): Promise<void> {
    if (!this.ownsProcess && !force) return;
    // The pid file names whoever runs on this data directory now (a test may have restarted it).
    const pid = this.runningPid() ?? this.child?.pid;
    if (!pid || !pidAlive(pid)) return;
    process.kill(pid, 'SIGTERM');
    const deadline = Date.now() + 60_000;
    while (pidAlive(pid) && Date.now() < deadline) await new Promise((r) => setTimeout(r, 100));
    if (pidAlive(pid)) process.kill(pid, 'SIGKILL');
    this.child = null;
  }

  /** Runs SQL as the local root over the unix socket. */
  rootSql(sql: string): string {
    const r = spawnSync('mariadb', [`--socket=${this.socket}`, '-uroot', '-N', '-B', '-e', sql], { encoding: 'utf8' });
    if (r.status !== 0) throw new Error(`SQL failed: ${r.stderr.trim()}`);
    return r.stdout;
  }

  /** Creates (idempotently) the application database and its non-root user with the given password. */
  ensureAppDatabase(db: AppDatabase): void {
    const q = (s: string) => s.replace(/\\/g, '\\\\').replace(/'/g, "\\'");
    this.rootSql(
      [
        `CREATE DATABASE IF NOT EXISTS \`${db.name}\` CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`,
        `CREATE USER IF NOT EXISTS '${q(db.user)}'@'127.0.0.1' IDENTIFIED BY '${q(db.password)}'`,
        `ALTER USER '${q(db.user)}'@'127.0.0.1' IDENTIFIED BY '${q(db.password)}'`,
        `GRANT ALL PRIVILEGES ON \`${db.name}\`.* TO '${q(db.user)}'@'127.0.0.1'`,
        'FLUSH PRIVILEGES',
      ].join(';\n'),
    );
  }

  /** Drops and recreates the application database (tests only). */
  resetDatabase(name: string): void {
    this.rootSql(`DROP DATABASE IF EXISTS \`${name}\`; CREATE DATABASE \`${name}\` CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`);
  }
}
