/**
 * CSV import of boxes with their controllers: the columns of the template, the limits of an
 * upload, the starting values a row does not give, and the shape of the row-by-row report.
 * A row is turned into a `BoxCreateBody` and a `ControllerCreateBody` (shared/schemas/boxes.ts),
 * so the form, the import and the seed are validated by the same definitions.
 */
import { z } from 'zod';
import type { BoxKind } from '../domain';
import type { BoxCreateBody } from './boxes';

/** Largest upload accepted (bytes): 1 MiB holds far more than IMPORT_MAX_ROWS rows of the template. */
export const IMPORT_MAX_BYTES = 1024 * 1024;
/** Most data rows in one file (header not counted). */
export const IMPORT_MAX_ROWS = 2000;

/** Columns of the template, in order; the header row names them (case and spaces around are ignored). */
export const IMPORT_COLUMNS = [
  'customer',
  'site',
  'box_name',
  'kind',
  'refrigerant',
  'setpoint',
  'unit',
  'high_limit',
  'low_limit',
  'valve_type',
  'controller_serial',
  'valve_full_steps',
  'firmware',
] as const;
export type ImportColumn = (typeof IMPORT_COLUMNS)[number];

/** Columns a file must have in its header (the others may be left out entirely). */
export const IMPORT_REQUIRED_COLUMNS: readonly ImportColumn[] = ['customer', 'site', 'box_name', 'kind', 'refrigerant', 'setpoint', 'unit'];

/** One data row as read from the file: every cell is text (absent or empty cells are ''). */
export const ImportCsvRow = z.object(Object.fromEntries(IMPORT_COLUMNS.map((c) => [c, z.string().default('')])) as Record<ImportColumn, z.ZodDefault<z.ZodString>>);
export type ImportCsvRow = z.infer<typeof ImportCsvRow>;

type DefaultedField = Exclude<keyof BoxCreateBody, 'siteId' | 'name' | 'kind' | 'setpointC' | 'refrigerant'>;

/**
 * Starting values for what a row does not give, by kind: the same starting values as the box form
 * (common practice for walk-ins; 41 °F / 5 °C is the usual cold-holding limit). Limits in °C,
 * differences in K.
 */
export const IMPORT_BOX_DEFAULTS: Record<BoxKind, Pick<BoxCreateBody, DefaultedField>> = {
  cooler: {
    differentialK: 1.5,
    highLimitC: 5,
    lowLimitC: -1,
    alarmDelayMin: 30,
    doorAlarmDelayMin: 5,
    valveType: 'eev',
    saturationMethod: 'pressure',
    superheatTargetK: 5.5,
    defrostType: 'off-cycle',
    defrostIntervalH: 6,
    defrostMaxMin: 30,
    defrostTerminationC: 8,
    dripMin: 2,
    fanDelayMin: 0,
  },
  freezer: {
    differentialK: 2,
    highLimitC: -12,
    lowLimitC: -30,
    alarmDelayMin: 30,
    doorAlarmDelayMin: 5,
    valveType: 'eev',
    saturationMethod: 'pressure',
    superheatTargetK: 5.5,
    defrostType: 'electric',
    defrostIntervalH: 6,
    defrostMaxMin: 30,
    defrostTerminationC: 12,
    dripMin: 3,
    fanDelayMin: 2,
  },
};

/** What one row would create (or, after the import, created). */
export interface ImportRowCreates {
  customerName: string;
  siteName: string;
  boxName: string;
  kind: BoxKind;
  setpointC: number;
  /** Null when the row has no controller serial (a box without a controller). */
  controllerSerial: string | null;
}

/** The verdict on one data row; `line` is the line number in the file (the header is line 1). */
export interface ImportRowReport {
  line: number;
  status: 'ok' | 'rejected';
  /** Each reason the row is refused, as a sentence naming the column; empty when ok. */
  reasons: string[];
  creates: ImportRowCreates | null;
}

/** The answer of a dry run, and the `rows` of a refused import (422). */
export interface ImportReport {
  dryRun: boolean;
  /** True when every row is ok (the import would store them all). */
  ok: boolean;
  rows: ImportRowReport[];
  counts: { rows: number; ok: number; rejected: number; boxes: number; controllers: number };
}

/** A new controller's device secret, shown only in the answer of the import. */
export interface ImportedSecret {
  serial: string;
  boxId: number;
  deviceSecret: string;
}

/** The answer of a successful import (201). */
export interface ImportResult extends ImportReport {
  boxIds: number[];
  secrets: ImportedSecret[];
}
