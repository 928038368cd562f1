/**
 * The alarm service: one rule engine per box in memory, fed by the bus (`reading`, `controller`,
 * `boxChanged`, `boxMaintenance`). A reading costs one in-memory evaluation; the database is
 * written only when a condition changes. Engine snapshots are saved after each change and every
 * minute (and at stop) so a restart re-arms running delays. A 30-s timer ticks the engines and
 * handles shelving expiry and escalation.
 */
import { BoxRuleEngine, type EngineSnapshot } from '../../shared/rules/engine';
import type { ConditionEvent, RuleBoxSettings, RuleReading } from '../../shared/alarms/types';
import type { ReadingDto } from '../../shared/schemas/live';
import type { AppContext } from '../context';
import type { Box } from '../models';
import type { EventBusMap } from '../events/bus';
import { Op } from 'sequelize';
import pLimit, { type LimitFunction } from 'p-limit';
import { isTransientError } from '../telemetry/writer';
import { ruleSettingsWithOverrides } from './ruleOverrides';
import { applyCondition, escalateAlarm, escalateDue, expireShelving, publishAlarm, suppressBoxAlarms, unsuppressBoxAlarms, type AlarmBox, type MaintenanceActor } from './actions';

/** Nominal controller reporting interval (s) when the box does not say (the simulator's default, docs/device-protocol.md). */
export const DEFAULT_REPORT_INTERVAL_S = 10;

export interface AlarmServiceOptions {
  /** Engine tick, shelving and escalation check period (ms). */
  tickMs?: number;
  /** Snapshot save period (ms). */
  snapshotMs?: number;
}

interface BoxState {
  engine: BoxRuleEngine;
  box: AlarmBox;
}

/** The rule settings of a box row (°C, K, minutes, seconds). */
export function ruleSettingsOf(b: Box): RuleBoxSettings {
  return {
    kind: b.kind,
    valveType: b.valveType,
    setpointC: b.setpointC,
    highLimitC: b.highLimitC,
    lowLimitC: b.lowLimitC,
    alarmDelayMin: b.alarmDelayMin,
    doorAlarmDelayMin: b.doorAlarmDelayMin,
    superheatTargetK: b.superheatTargetK,
    defrostMaxMin: b.defrostMaxMin,
    defrostTerminationC: b.defrostTerminationC,
    reportIntervalS: DEFAULT_REPORT_INTERVAL_S,
    pumpDownCutOutKPaG: null,
    overrides: {},
  };
}

/** The rule engine's view of a stored reading (reading time in epoch ms). */
export function ruleReadingOf(r: ReadingDto): RuleReading {
  return {
    tsMs: Date.parse(r.ts),
    boxAirC: r.boxAirC,
    suctionKPaG: r.suctionKPaG,
    suctionLineC: r.suctionLineC,
    coilInletC: r.coilInletC,
    saturatedSuctionC: r.saturatedSuctionC,
    superheatK: r.superheatK,
    valvePercent: r.valvePercent,
    compressorOn: r.compressorOn,
    fanOn: r.fanOn,
    defrostOn: r.defrostOn,
    doorOpen: r.doorOpen,
  };
}

export class AlarmService {
  private readonly boxes = new Map<number, BoxState>();
  /** Per-box chain so condition events of one box are stored in order. */
  private readonly chains = new Map<number, Promise<void>>();
  private readonly unsub: Array<() => void> = [];
  private timers: NodeJS.Timeout[] = [];
  private ticking: Promise<void> | null = null;
  /** Runs box jobs with bounded concurrency (half the database pool). */
  private readonly limitJobs: LimitFunction;
  private started = false;

  constructor(
    private readonly ctx: AppContext,
    private readonly opts: AlarmServiceOptions = {},
  ) {
    this.limitJobs = pLimit(Math.max(1, Math.floor(ctx.config.DB_POOL_MAX / 2)));
  }

  /** Loads every box's engine (from its snapshot when there is one), subscribes to the bus and starts the timers. */
  async start(): Promise<void> {
    if (this.started) return;
    this.started = true;
    const on = <K extends keyof EventBusMap>(name: K, fn: (...args: EventBusMap[K]) => void) => {
      this.ctx.bus.on(name, fn as never);
      this.unsub.push(() => this.ctx.bus.off(name, fn as never));
    };
    on('reading', (e) => this.onReading(e.boxId, e.reading));
    on('controller', (e) => this.run(e.boxId, (s) => s.engine.onControllerStatus(e.online, Date.parse(e.at))));
    on('boxChanged', (e) => this.enqueue(e.boxId, () => this.reload(e.boxId)));
    on('boxMaintenance', (e) => this.onMaintenance(e.boxId, e.untilMs, { userId: e.byUserId ?? null, note: e.note ?? null }));
    const tick = setInterval(() => this.timerTick(), this.opts.tickMs ?? 30_000);
    const snap = setInterval(() => void this.saveSnapshots().catch((err) => this.ctx.logger.error({ err }, 'alarm snapshot save failed')), this.opts.snapshotMs ?? 60_000);
    tick.unref();
    snap.unref();
    this.timers = [tick, snap];
    // Engines load through each box's chain, so an event that arrives meanwhile waits for its engine.
    for (const b of await this.ctx.models.Box.findAll({ attributes: ['id'] })) {
      this.enqueue(b.id, async () => {
        if (!this.boxes.has(b.id)) await this.load(b.id);
      });
    }
    await Promise.all([...this.chains.values()]);
  }

  /** Stops the timers and the bus listeners, waits for pending writes and saves every snapshot. */
  async stop(): Promise<void> {
    if (!this.started) return;
    this.started = false;
    for (const t of this.timers) clearInterval(t);
    this.timers = [];
    for (const u of this.unsub.splice(0)) u();
    await this.ticking;
    await Promise.all([...this.chains.values()]);
    await this.saveSnapshots();
  }

  /** Rules active now for a box (for diagnostics and tests). */
  activeRules(boxId: number): string[] {
    return this.boxes.get(boxId)?.engine.active() ?? [];
  }

  /** Waits until the events already received for a box are stored. */
  async settled(boxId: number): Promise<void> {
    await this.chains.get(boxId);
  }

  /**
   * One timer step at `nowMs`: engine ticks, maintenance and shelving expiry, then due escalations.
   * `boxIds` limits the step to those boxes' engines and alarms (tests step one box into the
   * future without stepping every other box in the database). A call while a step runs waits for it, then runs.
   */
  async tick(nowMs: number, boxIds?: readonly number[]): Promise<void> {
    while (this.ticking) await this.ticking;
    this.ticking = this.step(nowMs, boxIds);
    return this.ticking;
  }

  /** The interval's step: skipped while the previous one still runs, so slow steps never pile up. */
  private timerTick(): void {
    if (!this.ticking) void this.tick(Date.now());
  }

  private async step(nowMs: number, boxIds?: readonly number[]): Promise<void> {
    try {
      for (const id of boxIds ?? [...this.boxes.keys()]) if (this.boxes.has(id)) this.run(id, (s) => s.engine.onTick(nowMs));
      await this.chainsOf(boxIds);
      await this.expireMaintenance(nowMs, boxIds);
      await expireShelving(this.ctx, nowMs, boxIds);
      await escalateDue(this.ctx, nowMs, boxIds);
    } catch (err) {
      this.ctx.logger.error({ err }, 'alarm tick failed');
    } finally {
      this.ticking = null;
    }
  }

  /** Sends the escalation steps due at `nowMs` (the tick does this; tests call it with a later instant). */
  escalateDue(nowMs: number): Promise<number> {
    return escalateDue(this.ctx, nowMs);
  }

  /**
   * A maintenance window set (untilMs, epoch ms) or ended (null): the engine stops or resumes
   * raising, the box's open alarms are suppressed or unsuppressed (against the engine's active
   * rules), then the hub learns the new window. Runs in the box's chain, after pending condition events.
   */
  private onMaintenance(boxId: number, untilMs: number | null, by: MaintenanceActor): void {
    this.enqueue(boxId, async () => {
      const s = this.boxes.get(boxId) ?? (await this.load(boxId));
      if (!s) return;
      s.engine.setMaintenance(untilMs);
      const at = new Date();
      if (untilMs !== null) await suppressBoxAlarms(this.ctx, boxId, by, at);
      else await unsuppressBoxAlarms(this.ctx, boxId, s.engine.active(), by, at);
      await this.saveSnapshot(boxId, s);
      this.ctx.bus.emit('maintenanceChanged', { boxId, customerId: s.box.customerId, until: untilMs === null ? null : new Date(untilMs).toISOString() });
    });
  }

  /** Ends the maintenance windows that ran out by `nowMs` (the DB row is the authority; a newer window set meanwhile is kept). */
  private async expireMaintenance(nowMs: number, boxIds?: readonly number[]): Promise<void> {
    const due = await this.ctx.models.BoxMaintenance.findAll({ where: { untilAt: { [Op.lte]: new Date(nowMs) }, ...(boxIds ? { boxId: [...boxIds] } : {}) }, attributes: ['boxId', 'untilAt'] });
    for (const m of due) {
      const removed = await this.ctx.models.BoxMaintenance.destroy({ where: { boxId: m.boxId, untilAt: { [Op.lte]: new Date(nowMs) } } });
      if (removed > 0) this.onMaintenance(m.boxId, null, { userId: null, note: 'maintenance window ran out' });
    }
    await this.chainsOf(boxIds);
  }

  /** Waits for the pending events of the given boxes (all boxes without a list). */
  private async chainsOf(boxIds?: readonly number[]): Promise<void> {
    if (!boxIds) await Promise.all([...this.chains.values()]);
    else await Promise.all(boxIds.map((id) => this.chains.get(id)));
  }

  private onReading(boxId: number, reading: ReadingDto): void {
    // Arrival (wall) time feeds controller-offline; the rules' delays run on the reading's own time.
    const receivedAtMs = Date.now();
    this.run(boxId, (s) => s.engine.onReading(ruleReadingOf(reading), receivedAtMs));
  }

  /**
   * Runs an engine call in the box's order (loading the engine first if needed) and stores what
   * it returns. The fast path (engine loaded, nothing pending) is synchronous and in memory.
   */
  private run(boxId: number, call: (s: BoxState) => ConditionEvent[]): void {
    const s = this.boxes.get(boxId);
    if (s && !this.chains.has(boxId)) {
      // A bus listener must never throw into the emitter (the ingest emits after its commit).
      let events: ConditionEvent[];
      try {
        events = call(s);
      } catch (err) {
        this.ctx.logger.error({ err, boxId }, 'rule evaluation failed');
        return;
      }
      if (events.length > 0) this.enqueue(boxId, () => this.applyAll(boxId, events));
      return;
    }
    this.enqueue(boxId, async () => {
      const st = this.boxes.get(boxId) ?? (await this.load(boxId));
      if (!st) return;
      const events = call(st);
      if (events.length > 0) await this.applyAll(boxId, events);
    });
  }

  private enqueue(boxId: number, job: () => Promise<void>): void {
    const prev = this.chains.get(boxId) ?? Promise.resolve();
    // Each box keeps its order; across boxes at most `limitJobs` run at once, so a burst (every
    // box's first reading, a broker restart's last wills) leaves database connections for the HTTP side.
    const next = prev
      .then(() => this.limitJobs(job))
      .catch((err) => this.ctx.logger.error({ err, boxId }, 'alarm processing failed'))
      .finally(() => {
        if (this.chains.get(boxId) === next) this.chains.delete(boxId);
      });
    this.chains.set(boxId, next);
  }

  private async boxFacts(boxId: number): Promise<{ row: Box; facts: AlarmBox } | null> {
    const row = await this.ctx.models.Box.findByPk(boxId, { include: [{ association: 'site', attributes: ['id', 'name'] }] });
    if (!row) return null;
    const site = (row as Box & { site?: { name: string } }).site;
    return { row, facts: { id: row.id, siteId: row.siteId, customerId: row.customerId, name: row.name, siteName: site?.name ?? '' } };
  }

  private async load(boxId: number): Promise<BoxState | null> {
    const found = await this.boxFacts(boxId);
    if (!found) return null;
    const snap = await this.ctx.models.BoxEngineSnapshot.findByPk(boxId);
    // The box's per-rule overrides (box_rule_overrides) come with its settings.
    const settings = await ruleSettingsWithOverrides(this.ctx.models, found.row);
    let engine: BoxRuleEngine;
    try {
      engine = new BoxRuleEngine(settings, snap ? (JSON.parse(snap.snapshot) as EngineSnapshot) : undefined);
    } catch (err) {
      this.ctx.logger.warn({ err, boxId }, 'engine snapshot unusable; starting the box fresh');
      engine = new BoxRuleEngine(settings);
    }
    const m = await this.ctx.models.BoxMaintenance.findByPk(boxId);
    if (m && m.untilAt.getTime() > Date.now()) engine.setMaintenance(m.untilAt.getTime());
    const state = { engine, box: found.facts };
    this.boxes.set(boxId, state);
    return state;
  }

  private async reload(boxId: number): Promise<void> {
    const s = this.boxes.get(boxId);
    if (!s) return void (await this.load(boxId));
    const found = await this.boxFacts(boxId);
    if (!found) return void this.boxes.delete(boxId);
    s.box = found.facts;
    s.engine.updateSettings(await ruleSettingsWithOverrides(this.ctx.models, found.row));
  }

  private async applyAll(boxId: number, events: ConditionEvent[]): Promise<void> {
    const s = this.boxes.get(boxId);
    if (!s) return;
    for (const ev of events) {
      const r = await retryTransient(() => applyCondition(this.ctx, s.box, ev));
      if (!r) continue;
      await publishAlarm(this.ctx, r.alarm);
      if (r.notify) await escalateAlarm(this.ctx, r.alarm.id, Date.now());
    }
    await this.saveSnapshot(boxId, s);
  }

  private async saveSnapshot(boxId: number, s: BoxState): Promise<void> {
    await this.ctx.models.BoxEngineSnapshot.upsert({ boxId, snapshot: JSON.stringify(s.engine.snapshot()), savedAt: new Date() });
  }

  /** Saves every engine's snapshot (one statement per box; boxes deleted meanwhile are skipped). */
  async saveSnapshots(): Promise<void> {
    for (const [boxId, s] of this.boxes) {
      try {
        await this.saveSnapshot(boxId, s);
      } catch (err) {
        this.ctx.logger.warn({ err, boxId }, 'engine snapshot not saved');
      }
    }
  }
}

/**
 * Runs a transaction again when MariaDB answers a deadlock or lock-wait timeout (many boxes raising
 * at once, e.g. every controller's last will when a site loses power): the alarm must not be lost.
 */
async function retryTransient<T>(fn: () => Promise<T>, attempts = 6): Promise<T> {
  for (let i = 1; ; i++) {
    try {
      return await fn();
    } catch (err) {
      if (!isTransientError(err) || i >= attempts) throw err;
      await new Promise((r) => setTimeout(r, 20 * i + Math.random() * 30));
    }
  }
}
