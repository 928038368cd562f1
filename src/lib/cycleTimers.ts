/**
 * Cycle timers on the client: the server's answer (GET /boxes/:id/cycles) kept current by live
 * readings (state changes) and read against one shared clock, so counters tick without refetching.
 */
import type { BoxCyclesDto } from '@shared/schemas/cycles';
import type { ReadingDto } from '@shared/schemas/live';

const HOUR = 3_600_000;

export interface CycleState {
  compressorOn: boolean | null;
  compressorSinceMs: number | null;
  compressorSinceBeforeWindow: boolean;
  startsMs: number[];
  defrostOn: boolean | null;
  defrostLastStartMs: number | null;
  defrostLastEndMs: number | null;
  defrostIntervalH: number;
  doorOpen: boolean | null;
  doorSinceMs: number | null;
  doorTodayMs: number;
  doorCountedUntilMs: number;
  dayStartMs: number;
  dayEndMs: number;
  lastReadingMs: number | null;
  windowFromMs: number;
}

const ms = (iso: string | null) => (iso === null ? null : Date.parse(iso));

/** Client state from the server's answer. */
export function cycleStateFrom(dto: BoxCyclesDto): CycleState {
  return {
    compressorOn: dto.compressor.on,
    compressorSinceMs: ms(dto.compressor.sinceAt),
    compressorSinceBeforeWindow: dto.compressor.sinceBeforeWindow,
    startsMs: dto.compressor.startsAt.map(Date.parse),
    defrostOn: dto.defrost.on,
    defrostLastStartMs: ms(dto.defrost.lastStartAt),
    defrostLastEndMs: ms(dto.defrost.lastEndAt),
    defrostIntervalH: dto.defrost.intervalH,
    doorOpen: dto.door.open,
    doorSinceMs: ms(dto.door.sinceAt),
    doorTodayMs: dto.door.openTodayMin * 60_000,
    doorCountedUntilMs: Date.parse(dto.door.countedUntil),
    dayStartMs: Date.parse(dto.door.dayStartAt),
    dayEndMs: Date.parse(dto.door.dayEndAt),
    lastReadingMs: ms(dto.lastReadingAt),
    windowFromMs: Date.parse(dto.windowFrom),
  };
}

/** The state after one live reading (older readings than the last one change nothing). */
export function applyReading(s: CycleState, r: Pick<ReadingDto, 'ts' | 'compressorOn' | 'defrostOn' | 'doorOpen'>): CycleState {
  const t = Date.parse(r.ts);
  if (Number.isNaN(t) || (s.lastReadingMs !== null && t <= s.lastReadingMs)) return s;
  const n: CycleState = { ...s, startsMs: [...s.startsMs], lastReadingMs: t };
  if (n.compressorOn !== r.compressorOn) {
    if (r.compressorOn && n.compressorOn === false) n.startsMs.push(t);
    n.compressorOn = r.compressorOn;
    n.compressorSinceMs = t;
    n.compressorSinceBeforeWindow = false;
  }
  if (n.defrostOn !== r.defrostOn) {
    if (r.defrostOn) n.defrostLastStartMs = t;
    else if (n.defrostOn === true) n.defrostLastEndMs = t;
    n.defrostOn = r.defrostOn;
  }
  // Door time today: the open stretch up to this reading counts, from midnight on.
  if (n.doorOpen) n.doorTodayMs += Math.max(0, t - Math.max(n.doorCountedUntilMs, n.dayStartMs));
  n.doorCountedUntilMs = t;
  if (n.doorOpen !== r.doorOpen) {
    n.doorOpen = r.doorOpen;
    n.doorSinceMs = t;
  }
  return n;
}

export interface CycleTimers {
  compressorOn: boolean | null;
  /** How long the compressor has run (or been off), ms; null when unknown. */
  compressorForMs: number | null;
  compressorSinceBeforeWindow: boolean;
  startsLastHour: number;
  defrostOn: boolean | null;
  /** Since the last defrost started (or, when one is running, how long it has run), ms. */
  sinceDefrostStartMs: number | null;
  sinceDefrostEndMs: number | null;
  /** Until the next defrost by the interval, ms (negative: overdue); null when not scheduled (no start seen). */
  untilNextDefrostMs: number | null;
  doorOpen: boolean | null;
  doorForMs: number | null;
  doorTodayMs: number;
}

/** The timers at nowMs. */
export function timersAt(s: CycleState, nowMs: number): CycleTimers {
  const since = (t: number | null) => (t === null ? null : Math.max(0, nowMs - t));
  const nextMs = s.defrostLastStartMs === null ? null : s.defrostLastStartMs + s.defrostIntervalH * HOUR;
  const openTail = s.doorOpen ? Math.max(0, Math.min(nowMs, s.dayEndMs) - Math.max(s.doorCountedUntilMs, s.dayStartMs)) : 0;
  return {
    compressorOn: s.compressorOn,
    compressorForMs: since(s.compressorSinceMs),
    compressorSinceBeforeWindow: s.compressorSinceBeforeWindow,
    startsLastHour: s.startsMs.filter((t) => t > nowMs - HOUR && t <= nowMs).length,
    defrostOn: s.defrostOn,
    sinceDefrostStartMs: since(s.defrostLastStartMs),
    sinceDefrostEndMs: since(s.defrostLastEndMs),
    untilNextDefrostMs: nextMs === null ? null : nextMs - nowMs,
    doorOpen: s.doorOpen,
    doorForMs: since(s.doorSinceMs),
    doorTodayMs: s.doorTodayMs + openTail,
  };
}

/** "45 s", "12 min", "3 h 05 min", "2 d 4 h" from ms. */
export function durationText(msIn: number): string {
  const s = Math.max(0, Math.floor(msIn / 1000));
  if (s < 60) return `${s} s`;
  const m = Math.floor(s / 60);
  if (m < 60) return `${m} min`;
  const h = Math.floor(m / 60);
  if (h < 48) return `${h} h ${String(m % 60).padStart(2, '0')} min`;
  return `${Math.floor(h / 24)} d ${h % 24} h`;
}
