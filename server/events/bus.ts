/** The typed in-process event bus between the MQTT side, services and the WebSocket hub. */
import { EventEmitter } from 'node:events';
import type { ReadingDto } from '../../shared/schemas/live';
import type { SettingsChangeDto } from '../../shared/schemas/settings';
import type { AlarmDto } from '../../shared/schemas/alarms';

export interface EventBusMap {
  /** A reading was committed to the database. */
  reading: [{ boxId: number; customerId: number; reading: ReadingDto }];
  /** A controller went online or offline. */
  controller: [{ boxId: number; customerId: number; serial: string; online: boolean; at: string }];
  /** A settings change changed state (pending, applied, rejected, timed out). */
  settings: [{ boxId: number; customerId: number; change: SettingsChangeDto }];
  /** A controller was disabled or its secret rotated: the broker drops its connection. */
  controllerRevoked: [{ serial: string; reason: 'disabled' | 'rotated' }];
  /** A box's settings that the ingest caches (refrigerant, method, elevation) changed. */
  boxChanged: [{ boxId: number }];
  /** A user signed out or was disabled: close their live sockets. */
  userSessionEnded: [{ userId: number }];
  /** A user's role, customer or account state changed (or their password was reset): live sockets opened as the old user close. */
  userAccessChanged: [{ userId: number; changed: Array<'role' | 'customerId' | 'disabled' | 'password'> }];
  /** An alarm changed (raised, cleared, acknowledged, shelved…): the hub forwards it to the tenant. */
  alarm: [{ boxId: number; customerId: number; alarm: AlarmDto }];
  /** A box's maintenance window was set (until, epoch ms) or ended (null): the alarm service stops raising for it. */
  boxMaintenance: [{ boxId: number; untilMs: number | null; byUserId?: number | null; note?: string | null }];
  /** A box's maintenance window as stored after the alarm service applied it (until ISO, or null when it ended): the hub forwards it. */
  maintenanceChanged: [{ boxId: number; customerId: number; until: string | null }];
}

export class EventBus extends EventEmitter<EventBusMap> {
  constructor() {
    super();
    this.setMaxListeners(50);
  }
}
