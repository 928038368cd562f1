/**
 * The fleet file the demo seed writes for the simulator (default `.data/demo-controllers.json`):
 * one entry per provisioned controller with its device secret and the box settings it starts with.
 */
import { readFile } from 'node:fs/promises';
import { z } from 'zod';
import { BOX_KINDS, DEFROST_TYPES, VALVE_TYPES } from '../shared/domain';
import { REFRIGERANT_IDS } from '../shared/refrigerants';
import { BOX_LIMITS } from '../shared/schemas/boxes';
import { ELEVATION_RANGE_M } from '../shared/field/pressure';

const L = BOX_LIMITS;
const range = (r: { min: number; max: number }) => z.number().min(r.min).max(r.max);

export const FleetController = z
  .object({
    serial: z.string().regex(/^[A-Za-z0-9][A-Za-z0-9_-]{2,39}$/),
    secret: z.string().min(8).max(200),
    boxId: z.number().int().positive(),
    kind: z.enum(BOX_KINDS),
    valveType: z.enum(VALVE_TYPES),
    refrigerant: z.enum(REFRIGERANT_IDS),
    setpointC: range(L.setpointC),
    differentialK: range(L.differentialK),
    superheatTargetK: range(L.superheatTargetK),
    valveFullSteps: z.number().int().min(100).max(10_000),
    elevationM: z.number().min(ELEVATION_RANGE_M.min).max(ELEVATION_RANGE_M.max),
    defrostType: z.enum(DEFROST_TYPES),
    defrostIntervalH: range(L.defrostIntervalH),
    defrostMaxMin: range(L.defrostMaxMin),
    defrostTerminationC: range(L.defrostTerminationC),
    dripMin: range(L.dripMin),
    fanDelayMin: range(L.fanDelayMin),
  })
  .strict();
export type FleetController = z.infer<typeof FleetController>;

/** The box settings a fleet entry copies. */
export type FleetBoxSettings = Pick<FleetController, 'kind' | 'valveType' | 'setpointC' | 'differentialK' | 'superheatTargetK' | 'defrostType' | 'defrostIntervalH' | 'defrostMaxMin' | 'defrostTerminationC' | 'dripMin' | 'fanDelayMin'> & { id: number; refrigerant: string };

/** A fleet entry for a box and its controller, checked against the fleet file's schema (throws when it does not fit). */
export function fleetEntryFor(box: FleetBoxSettings, controller: { serial: string; secret: string; valveFullSteps: number }, elevationM: number): FleetController {
  return FleetController.parse({
    serial: controller.serial,
    secret: controller.secret,
    boxId: box.id,
    kind: box.kind,
    valveType: box.valveType,
    refrigerant: box.refrigerant,
    setpointC: box.setpointC,
    differentialK: box.differentialK,
    superheatTargetK: box.superheatTargetK,
    valveFullSteps: controller.valveFullSteps,
    elevationM,
    defrostType: box.defrostType,
    defrostIntervalH: box.defrostIntervalH,
    defrostMaxMin: box.defrostMaxMin,
    defrostTerminationC: box.defrostTerminationC,
    dripMin: box.dripMin,
    fanDelayMin: box.fanDelayMin,
  });
}

export const FleetFile = z
  .object({ controllers: z.array(FleetController).max(10_000) })
  .strict()
  .refine((f) => new Set(f.controllers.map((c) => c.serial)).size === f.controllers.length, {
    message: 'serials must be unique',
    path: ['controllers'],
  });
export type FleetFile = z.infer<typeof FleetFile>;

/** Reads and validates a fleet file; throws an Error naming the file and every bad field. */
export async function readFleetFile(path: string): Promise<FleetFile> {
  const text = await readFile(path, 'utf8');
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (e) {
    throw new Error(`${path}: not JSON (${(e as Error).message})`);
  }
  const parsed = FleetFile.safeParse(json);
  if (!parsed.success) {
    const lines = parsed.error.issues.slice(0, 20).map((i) => `  ${i.path.join('.')}: ${i.message}`);
    throw new Error(`${path}: invalid fleet file\n${lines.join('\n')}`);
  }
  return parsed.data;
}
