/** serial → what the conversion needs about the box; refreshed when a box or controller changes. */
import type { Models } from '../models';
import type { EventBus } from '../events/bus';
import type { BoxInfo } from './convert';
import { SettingsHistory } from './history';

const NEGATIVE_TTL_MS = 30_000;

type ControllerRow = InstanceType<Models['Controller']>;

function toInfo(ctl: ControllerRow): BoxInfo | null {
  const box = (ctl as unknown as { box?: InstanceType<Models['Box']> & { site?: InstanceType<Models['Site']> } }).box;
  if (!box || !box.site) return null;
  return {
    boxId: box.id,
    customerId: box.customerId,
    controllerId: ctl.id,
    serial: ctl.serial,
    refrigerant: box.refrigerant,
    saturationMethod: box.saturationMethod,
    valveType: box.valveType,
    elevationM: box.site.elevationM,
    valveFullSteps: ctl.valveFullSteps,
    gaugeReference: ctl.gaugeReference,
    disabled: ctl.disabled,
  };
}

export class BoxCache {
  private bySerial = new Map<string, BoxInfo>();
  private unknown = new Map<string, number>();
  /** Conversion settings over time (a replayed reading is converted with those of its time). */
  readonly history: SettingsHistory;
  private readonly onBox = ({ boxId }: { boxId: number }) => {
    for (const [serial, info] of this.bySerial) {
      if (info.boxId !== boxId) continue;
      this.changedAt.set(boxId, Date.now());
      this.bySerial.delete(serial);
      this.loading.delete(serial);
      // Reload at once, so the history records the change when it happens, not at the next reading.
      void this.get(serial).catch(() => undefined);
    }
  };
  private readonly onRevoked = ({ serial }: { serial: string }) => {
    this.bySerial.delete(serial);
  };

  constructor(
    private readonly models: Models,
    private readonly bus: EventBus,
  ) {
    const sequelize = models.Controller.sequelize;
    if (!sequelize) throw new Error('models are not initialised');
    this.history = new SettingsHistory(sequelize);
    bus.on('boxChanged', this.onBox);
    bus.on('controllerRevoked', this.onRevoked);
  }

  /** The box of a controller serial with the conversion settings valid at a reading's time (epoch ms), or null. */
  async getAt(serial: string, tsMs: number): Promise<BoxInfo | null> {
    const info = await this.get(serial);
    if (!info) return null;
    const at = await this.history.at(info.boxId, tsMs);
    return at ? { ...info, refrigerant: at.refrigerant, elevationM: at.elevationM, gaugeReference: at.gaugeReference } : info;
  }

  /** When each box's change was announced, epoch ms: the new settings are valid from then, not from when they were reloaded. */
  private changedAt = new Map<number, number>();

  private async observe(info: BoxInfo): Promise<void> {
    const at = this.changedAt.get(info.boxId) ?? Date.now();
    await this.history.observe(info.boxId, { refrigerant: info.refrigerant, elevationM: info.elevationM, gaugeReference: info.gaugeReference ?? 'vented-gauge' }, at);
    this.changedAt.delete(info.boxId);
  }

  private loading = new Map<string, Promise<BoxInfo | null>>();

  /** The box of a controller serial, or null when no such controller exists (one query per serial at a time). */
  get(serial: string): Promise<BoxInfo | null> {
    const hit = this.bySerial.get(serial);
    if (hit) return Promise.resolve(hit);
    const miss = this.unknown.get(serial);
    if (miss && Date.now() - miss < NEGATIVE_TTL_MS) return Promise.resolve(null);
    let p = this.loading.get(serial);
    if (!p) {
      p = this.load(serial).finally(() => this.loading.delete(serial));
      this.loading.set(serial, p);
    }
    return p;
  }

  /** Loads every controller's box in one query (at ingest start, so a fleet's first readings need no lookups). */
  async preload(): Promise<number> {
    const rows = await this.models.Controller.findAll({ include: [{ model: this.models.Box, as: 'box', include: [{ model: this.models.Site, as: 'site' }] }] });
    await this.history.preload();
    for (const ctl of rows) {
      const info = toInfo(ctl);
      if (!info) continue;
      await this.observe(info);
      this.bySerial.set(ctl.serial, info);
    }
    return rows.length;
  }

  private async load(serial: string): Promise<BoxInfo | null> {
    const ctl = await this.models.Controller.findOne({
      where: { serial },
      include: [{ model: this.models.Box, as: 'box', include: [{ model: this.models.Site, as: 'site' }] }],
    });
    const info = ctl ? toInfo(ctl) : null;
    if (!info) {
      this.unknown.set(serial, Date.now());
      return null;
    }
    await this.observe(info);
    this.bySerial.set(serial, info);
    this.unknown.delete(serial);
    return info;
  }

  /** Forgets everything (tests, after bulk changes). */
  clear(): void {
    this.bySerial.clear();
    this.unknown.clear();
    this.history.clear();
  }

  close(): void {
    this.bus.off('boxChanged', this.onBox);
    this.bus.off('controllerRevoked', this.onRevoked);
  }
}
