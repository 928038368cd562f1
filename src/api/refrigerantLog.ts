/** The refrigerant log of a box: read, set the full charge, add an addition or recovery. */
import type { RefrigerantEntryBody, RefrigerantLogDto, RefrigerantSystemBody } from '@shared/schemas/refrigerantLog';
import { http } from './http';

export const refrigerantLogApi = {
  get: (boxId: number) => http.get<RefrigerantLogDto>(`/refrigerant-log/boxes/${boxId}`),
  setSystem: (boxId: number, body: RefrigerantSystemBody) => http.put<RefrigerantLogDto>(`/refrigerant-log/boxes/${boxId}/system`, body),
  addEntry: (boxId: number, body: RefrigerantEntryBody) => http.post<RefrigerantLogDto>(`/refrigerant-log/boxes/${boxId}/entries`, body),
};
