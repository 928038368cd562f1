/** serial → what the conversion needs about the box; refreshed when a box or controller changes. */
import type { Models } from '../models';
import type { EventBus } from '../events/bus';
import type { BoxInfo } from './convert';

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
    disabled: ctl.disabled,
  };
}

export class BoxCache {
  private bySerial = new Map<string, BoxInfo>();
  private unknown = new Map<string, number>();
  private readonly onBox = ({ boxId }: { boxId: number }) => {
    for (const [serial, info] of this.bySerial) if (info.boxId === boxId) this.bySerial.delete(serial);
  };
  private readonly onRevoked = ({ serial }: { serial: string }) => {
    this.bySerial.delete(serial);
  };

  constructor(
    private readonly models: Models,
    private readonly bus: EventBus,
  ) {
    bus.on('boxChanged', this.onBox);
    bus.on('controllerRevoked', this.onRevoked);
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
    for (const ctl of rows) {
      const info = toInfo(ctl);
      if (info) this.bySerial.set(ctl.serial, info);
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
    this.bySerial.set(serial, info);
    this.unknown.delete(serial);
    return info;
  }

  /** Forgets everything (tests, after bulk changes). */
  clear(): void {
    this.bySerial.clear();
    this.unknown.clear();
  }

  close(): void {
    this.bus.off('boxChanged', this.onBox);
    this.bus.off('controllerRevoked', this.onRevoked);
  }
}
