/**
 * Refrigerant catalogue. The calculators use the shared engine directly (no server call); the
 * server list exists for other clients and is offered here for completeness.
 */
import { listRefrigerants, type RefrigerantInfo } from '@shared/refrigerants';
import { http } from './http';

export const refrigerantsApi = {
  list: () => http.get<RefrigerantInfo[]>('/refrigerants'),
  /** Client-side list from the shared engine. */
  local: (): RefrigerantInfo[] => listRefrigerants(),
};
