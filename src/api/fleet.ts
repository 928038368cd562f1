import type { FleetBoxStatus } from '@shared/schemas/live';
import { http } from './http';

export const fleetApi = {
  status: (signal?: AbortSignal) => http.get<FleetBoxStatus[]>('/fleet/status', undefined, signal),
};
