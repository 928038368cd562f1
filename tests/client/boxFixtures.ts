/** Invented demo boxes, statuses and readings for client tests (no real site, brand or person). */
import type { BoxDto } from '@shared/schemas/boxes';
import type { FleetBoxStatus, ReadingDto } from '@shared/schemas/live';

/** Creation times of the invented rows (not reading times). */
export const NOW_ISO = '2030-01-15T12:00:00.000Z';

/** A reading taken just now (real clock) unless `ts` is given. */
export function makeReading(over: Partial<ReadingDto> = {}): ReadingDto {
  return {
    ts: new Date().toISOString(),
    seq: 100,
    boxAirC: 2.5,
    suctionKPaG: 120,
    suctionLineC: -2,
    saturatedSuctionC: -7,
    superheatK: 5,
    coilInletC: -6.5,
    dischargeAirC: 0.5,
    liquidKPaG: null,
    liquidLineC: null,
    subcoolingK: null,
    valveSteps: 560,
    valvePercent: 35,
    compressorOn: true,
    fanOn: true,
    defrostOn: false,
    doorOpen: false,
    ...over,
  };
}

export function makeStatus(over: Partial<FleetBoxStatus> = {}): FleetBoxStatus {
  return {
    boxId: 5,
    boxName: 'Walk-in cooler 1',
    kind: 'cooler',
    valveType: 'eev',
    refrigerant: 'R-134a',
    setpointC: 2,
    highLimitC: 5,
    lowLimitC: -1,
    superheatTargetK: 4,
    siteId: 2,
    siteName: 'Harbour Street kitchen',
    customerId: 3,
    customerName: 'Example Bistro Group',
    controllerSerial: 'SIM-0005',
    online: true,
    lastSeenAt: NOW_ISO,
    latest: makeReading(),
    maintenanceUntil: null,
    ...over,
  };
}

export function makeBox(over: Partial<BoxDto> = {}): BoxDto {
  return {
    id: 5,
    siteId: 2,
    name: 'Walk-in cooler 1',
    kind: 'cooler',
    setpointC: 2,
    differentialK: 2,
    highLimitC: 5,
    lowLimitC: -1,
    alarmDelayMin: 30,
    doorAlarmDelayMin: 5,
    refrigerant: 'R-134a',
    valveType: 'eev',
    saturationMethod: 'pressure',
    superheatTargetK: 4,
    defrostType: 'off-cycle',
    defrostIntervalH: 6,
    defrostMaxMin: 30,
    defrostTerminationC: 5,
    dripMin: 0,
    fanDelayMin: 0,
    siteName: 'Harbour Street kitchen',
    customerId: 3,
    customerName: 'Example Bistro Group',
    controller: { id: 9, serial: 'SIM-0005', valveFullSteps: 1600, firmware: null, lastSeenAt: NOW_ISO, online: true, disabled: false },
    maintenanceUntil: null,
    createdAt: NOW_ISO,
    updatedAt: NOW_ISO,
    ...over,
  };
}
