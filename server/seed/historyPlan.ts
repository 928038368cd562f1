/**
 * What the demo history seeds for each box: the box as the simulator and the ingest see it, the
 * time window, and the past faults (a door left ajar one evening, a low-charge episode) with the
 * note the demo technician acknowledged each one with. Plain data, so it crosses to a worker thread.
 */
import type { RuleBoxSettings } from '../../shared/alarms/types';
import type { BoxKind, DefrostType, SaturationMethod, ValveType } from '../../shared/domain';
import type { RefrigerantId } from '../../shared/refrigerants';
import type { FaultName } from '../../shared/schemas/demo';

/** One demo box with what the model, the conversion and the rules need (°C, K, min, m). */
export interface HistoryBox {
  boxId: number;
  siteId: number;
  customerId: number;
  serial: string;
  name: string;
  timeZone: string;
  kind: BoxKind;
  valveType: ValveType;
  refrigerant: RefrigerantId;
  saturationMethod: SaturationMethod;
  elevationM: number;
  valveFullSteps: number;
  setpointC: number;
  differentialK: number;
  superheatTargetK: number;
  defrostType: DefrostType;
  defrostIntervalH: number;
  defrostMaxMin: number;
  defrostTerminationC: number;
  dripMin: number;
  fanDelayMin: number;
  rules: RuleBoxSettings;
}

/** A fault that was on in the model from fromMs to toMs (epoch ms), and how the technician answered its alarms. */
export interface FaultEpisode {
  fault: FaultName;
  fromMs: number;
  toMs: number;
  /** The technician acknowledges each alarm of the episode this long after it was raised, min. */
  ackAfterMin: number;
  note: string;
}

/** Everything one box's history needs. */
export interface HistoryJob {
  box: HistoryBox;
  /** Window of stored readings, epoch ms: [fromMs, toMs). */
  fromMs: number;
  toMs: number;
  /** Reporting interval from detailFromMs on, s (readings also at every state change, as the controller sends them). */
  intervalS: number;
  /** Before this instant (epoch ms) readings are stored every coarseIntervalS instead (state changes still at once). */
  detailFromMs: number;
  coarseIntervalS: number;
  faults: FaultEpisode[];
  /** The demo technician's user id (acknowledges the past alarms); null leaves them unacknowledged. */
  technicianId: number | null;
}

/** The controllers' reporting interval, s: the simulator's default (simulator/README.md, `--interval`). */
export const DEMO_REPORT_INTERVAL_S = 10;
/**
 * Older history is stored at one reading a minute (plus every state change): the 1-min rollups and
 * the sample-and-hold times (MAX_HOLD_MS = 60 s) come out the same, and the seed stays quick. The
 * last day, which the 24-hour chart and zooms show reading by reading, is stored at the live interval.
 */
export const COARSE_REPORT_INTERVAL_S = 60;
export const DETAIL_HISTORY_MS = 86_400_000;

/** Local wall-clock parts of an instant in an IANA zone. */
function localParts(ms: number, timeZone: string): { y: number; mo: number; d: number; h: number; mi: number } {
  const f = new Intl.DateTimeFormat('en-US', { timeZone, hourCycle: 'h23', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit' });
  const p = Object.fromEntries(f.formatToParts(new Date(ms)).map((x) => [x.type, x.value]));
  return { y: Number(p.year), mo: Number(p.month), d: Number(p.day), h: Number(p.hour), mi: Number(p.minute) };
}

/** Epoch ms of local time hh:mm on the local day `daysBack` days before the day of `nowMs` in `timeZone`. */
export function localTimeMs(nowMs: number, timeZone: string, daysBack: number, hour: number, minute: number): number {
  const today = localParts(nowMs, timeZone);
  const wantedUtc = Date.UTC(today.y, today.mo - 1, today.d - daysBack, hour, minute);
  // Two passes of "guess, see what local time it is, correct" settle across a DST change.
  let guess = wantedUtc;
  for (let i = 0; i < 2; i++) {
    const seen = localParts(guess, timeZone);
    guess += wantedUtc - Date.UTC(seen.y, seen.mo - 1, seen.d, seen.h, seen.mi);
  }
  return guess;
}

const DOOR_NOTE = 'Door found propped open by a delivery cart; closed it, checked the gasket and the box recovering.';
const CHARGE_NOTE = 'Low charge: leak found at a flare fitting on the liquid line and repaired; charge restored per the unit\'s data plate.';

/**
 * The past faults of the demo: a door left ajar one evening (20:40 local, 50 min) on the first
 * cooler, and a low-charge episode (09:00 to 15:30 local, found and repaired) on the next cooler
 * with an electronic valve. Each sits as far back as the window allows (up to 3 and 8 days), and a
 * fault that does not fit inside [fromMs, nowMs) is left out.
 */
export function planFaults(boxes: HistoryBox[], fromMs: number, nowMs: number): Map<number, FaultEpisode[]> {
  const out = new Map<number, FaultEpisode[]>();
  const spanDays = Math.floor((nowMs - fromMs) / 86_400_000);
  const coolers = boxes.filter((b) => b.kind === 'cooler');
  const door = coolers[0];
  const charge = coolers.find((b) => b !== door && b.valveType === 'eev' && b.saturationMethod === 'pressure');
  const add = (box: HistoryBox | undefined, episode: FaultEpisode) => {
    if (!box || episode.fromMs < fromMs || episode.toMs > nowMs - 30 * 60_000) return;
    out.set(box.boxId, [...(out.get(box.boxId) ?? []), episode]);
  };
  if (door) {
    const startMs = localTimeMs(nowMs, door.timeZone, Math.min(3, Math.max(1, spanDays - 1)), 20, 40);
    add(door, { fault: 'door-ajar', fromMs: startMs, toMs: startMs + 50 * 60_000, ackAfterMin: 4, note: DOOR_NOTE });
  }
  if (charge) {
    const startMs = localTimeMs(nowMs, charge.timeZone, Math.min(8, Math.max(1, spanDays - 1)), 9, 0);
    add(charge, { fault: 'low-charge', fromMs: startMs, toMs: startMs + 6.5 * 3_600_000, ackAfterMin: 12, note: CHARGE_NOTE });
  }
  return out;
}
