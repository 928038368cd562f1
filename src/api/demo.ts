import { DemoFaultBody, type FaultName } from '@shared/schemas/demo';
import { http } from './http';

/** The server's answer to `POST /api/v1/demo/faults` (202): the command it passed to the simulator. */
export interface DemoFaultAnswer {
  serial: string;
  fault: FaultName;
  on: boolean;
}

export const demoApi = {
  /** Switches one simulated fault on or off for a box (admin, demo mode). The body is checked with the shared schema before it is sent. */
  setFault: (body: DemoFaultBody) => http.post<DemoFaultAnswer>('/demo/faults', DemoFaultBody.parse(body)),
};
