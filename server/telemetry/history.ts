/**
 * History of the box settings the conversion depends on (refrigerant, site elevation, gauge
 * reference of the controller's transducers), table box_settings_history. A row is written
 * whenever the ingest's box cache sees them change; a reading is converted with the row valid at
 * its own time, so a reading replayed from a controller's buffer (up to 24 h late) uses the
 * refrigerant and elevation of when it was taken. The newest rows of each box are kept in memory
 * (at most MAX_ENTRIES_PER_BOX per box and MAX_BOXES boxes); older ones are read when asked for.
 */
import { QueryTypes, type Sequelize } from 'sequelize';
import type { GaugeReference } from '../../shared/schemas/boxes';
import { sqlTs } from '../db/sequelize';

/** The settings a reading is converted with. */
export interface ConversionSettings {
  refrigerant: string;
  elevationM: number;
  gaugeReference: GaugeReference;
}

interface Entry extends ConversionSettings {
  validFromMs: number;
}

interface BoxHistory {
  /** Oldest first. */
  entries: Entry[];
  /** True when entries hold every row of the box. */
  complete: boolean;
}

/** Rows kept in memory per box (settings change rarely; the buffer replays at most 24 h). */
export const MAX_ENTRIES_PER_BOX = 16;
/** Boxes whose history is kept in memory; the oldest loaded is forgotten beyond this. */
export const MAX_BOXES = 50_000;
/** valid_from of a box's first row: valid since before any reading. */
const SINCE_EVER = '1970-01-01 00:00:00.000';

type Row = { valid_from: string; refrigerant: string; elevation_m: number | string; gauge_reference: GaugeReference };

const toEntry = (r: Row): Entry => ({
  validFromMs: Date.parse(`${String(r.valid_from).replace(' ', 'T').slice(0, 23)}Z`),
  refrigerant: r.refrigerant,
  elevationM: Number(r.elevation_m),
  gaugeReference: r.gauge_reference,
});

const same = (a: ConversionSettings, b: ConversionSettings) => a.refrigerant === b.refrigerant && a.elevationM === b.elevationM && a.gaugeReference === b.gaugeReference;

const SELECT = "SELECT DATE_FORMAT(valid_from, '%Y-%m-%d %H:%i:%s.%f') AS valid_from, refrigerant, elevation_m, gauge_reference FROM box_settings_history";

export class SettingsHistory {
  private byBox = new Map<number, BoxHistory>();

  constructor(private readonly sequelize: Sequelize) {}

  private remember(boxId: number, h: BoxHistory): void {
    if (!this.byBox.has(boxId) && this.byBox.size >= MAX_BOXES) {
      const oldest = this.byBox.keys().next();
      if (!oldest.done) this.byBox.delete(oldest.value);
    }
    this.byBox.set(boxId, h);
  }

  private async load(boxId: number): Promise<BoxHistory> {
    const hit = this.byBox.get(boxId);
    if (hit) return hit;
    const rows = await this.sequelize.query<Row>(`${SELECT} WHERE box_id = ? ORDER BY valid_from DESC, id DESC LIMIT ?`, { replacements: [boxId, MAX_ENTRIES_PER_BOX + 1], type: QueryTypes.SELECT });
    const h: BoxHistory = { entries: rows.slice(0, MAX_ENTRIES_PER_BOX).map(toEntry).reverse(), complete: rows.length <= MAX_ENTRIES_PER_BOX };
    this.remember(boxId, h);
    return h;
  }

  /** Loads every box's rows in one query (at ingest start, before observing the whole fleet). */
  async preload(): Promise<void> {
    const rows = await this.sequelize.query<Row & { box_id: number }>(`${SELECT.replace('SELECT ', 'SELECT box_id, ')} ORDER BY box_id, valid_from, id`, { type: QueryTypes.SELECT });
    const all = new Map<number, Entry[]>();
    for (const r of rows) {
      const list = all.get(Number(r.box_id)) ?? [];
      list.push(toEntry(r));
      all.set(Number(r.box_id), list);
    }
    for (const [boxId, list] of all) this.remember(boxId, { entries: list.slice(-MAX_ENTRIES_PER_BOX), complete: list.length <= MAX_ENTRIES_PER_BOX });
  }

  /** Records a box's current settings (valid from nowMs, epoch ms) when they differ from its newest row; a box's first row is valid since ever. */
  async observe(boxId: number, current: ConversionSettings, nowMs = Date.now()): Promise<void> {
    const h = await this.load(boxId);
    const newest = h.entries[h.entries.length - 1];
    if (newest && same(newest, current)) return;
    const first = !newest;
    const validFromMs = first ? 0 : Math.max(nowMs, newest.validFromMs + 1);
    await this.sequelize.query('INSERT INTO box_settings_history (box_id, valid_from, refrigerant, elevation_m, gauge_reference) VALUES (?,?,?,?,?)', {
      replacements: [boxId, first ? SINCE_EVER : sqlTs(validFromMs), current.refrigerant, current.elevationM, current.gaugeReference],
    });
    h.entries.push({ validFromMs, ...current });
    if (h.entries.length > MAX_ENTRIES_PER_BOX) {
      h.entries.shift();
      h.complete = false;
    }
  }

  /** The settings valid at a reading's time (epoch ms); the box's oldest row for a reading older than every row; null when the box has none. */
  async at(boxId: number, tsMs: number): Promise<ConversionSettings | null> {
    const h = await this.load(boxId);
    for (let i = h.entries.length - 1; i >= 0; i--) {
      const e = h.entries[i];
      if (e && e.validFromMs <= tsMs) return e;
    }
    if (!h.complete) {
      const rows = await this.sequelize.query<Row>(`${SELECT} WHERE box_id = ? AND valid_from <= ? ORDER BY valid_from DESC, id DESC LIMIT 1`, { replacements: [boxId, sqlTs(tsMs)], type: QueryTypes.SELECT });
      if (rows[0]) return toEntry(rows[0]);
    }
    return h.entries[0] ?? null;
  }

  /** Forgets the in-memory copy (tests). */
  clear(): void {
    this.byBox.clear();
  }
}
