/**
 * Superheat and valve opening describe a running circuit. With the compressor off the suction line
 * warms toward box air and the valve sits closed (or pumped down), so the last figure is not a live
 * value (common practice: read superheat only once the system has run and settled).
 */
import type { ReadingDto } from '@shared/schemas/live';

/** True when a reading exists and was taken with the compressor off. */
export function isOffCycle(r: Pick<ReadingDto, 'compressorOn'> | null | undefined): boolean {
  return r !== null && r !== undefined && !r.compressorOn;
}

/** The tooltip for a figure read in the off cycle. */
export function offCycleTitle(what: string, text: string): string {
  const figure = text === '—' ? 'No figure' : `${what} ${text}`;
  return `${figure}, read with the compressor off: not a live value. It only means something while the compressor runs.`;
}
