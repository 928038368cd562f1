/** Cycle timers of a box and the defrost / door-open periods of a span (GET /boxes/:id/cycles). */
import type { BoxCyclesDto } from '@shared/schemas/cycles';
import { http } from './http';

export const cyclesApi = {
  /** The timers now; with `from`/`to` (at most 8 days apart) also the periods within that span. */
  get: (boxId: number, span?: { from: string; to: string }, signal?: AbortSignal) => http.get<BoxCyclesDto>(`/boxes/${boxId}/cycles`, span ?? {}, signal),
};
