/**
 * The air entering a condenser or gas cooler, when a controller reports it (optional telemetry
 * field `condenserAirC`): with a supercritical R-744 high side it gives the gas cooler's approach.
 */
import type { Migration } from '../migrate';

export const up: Migration = async ({ context }) => {
  await context.sequelize.query("ALTER TABLE readings ADD COLUMN condenser_air_c DOUBLE NULL COMMENT 'air entering the condenser or gas cooler, °C'");
};

export const down: Migration = async ({ context }) => {
  await context.sequelize.query('ALTER TABLE readings DROP COLUMN condenser_air_c');
};
