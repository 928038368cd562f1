/**
 * Telemetry storage: raw readings (daily partitions), rollups of 1 min, 15 min and 1 h (monthly
 * partitions), the latest reading per box, settings changes. Partitioned tables cannot carry
 * foreign keys (MariaDB error 1506), so box ids there are checked by the ingest.
 * Further partitions are added and dropped by server/telemetry/partitions.ts.
 */
import type { Migration } from '../migrate';

const rollup = (name: string) => `CREATE TABLE ${name} (
    box_id INT UNSIGNED NOT NULL,
    bucket_start DATETIME NOT NULL,
    samples INT UNSIGNED NOT NULL,
    box_air_min_c DOUBLE NOT NULL,
    box_air_max_c DOUBLE NOT NULL,
    box_air_sum_c DOUBLE NOT NULL,
    superheat_sum_k DOUBLE NOT NULL,
    superheat_n INT UNSIGNED NOT NULL,
    valve_sum_pct DOUBLE NOT NULL,
    valve_n INT UNSIGNED NOT NULL,
    suction_sum_kpa_g DOUBLE NOT NULL,
    covered_ms BIGINT UNSIGNED NOT NULL COMMENT 'time covered by the samples (sample-and-hold)',
    compressor_ms BIGINT UNSIGNED NOT NULL,
    defrost_ms BIGINT UNSIGNED NOT NULL,
    door_ms BIGINT UNSIGNED NOT NULL,
    PRIMARY KEY (box_id, bucket_start)
  ) ENGINE=InnoDB
  PARTITION BY RANGE COLUMNS(bucket_start) (PARTITION p00000000 VALUES LESS THAN ('2026-01-01'), PARTITION pmax VALUES LESS THAN (MAXVALUE))`;

const TABLES = [
  `CREATE TABLE readings (
    box_id INT UNSIGNED NOT NULL,
    ts DATETIME(3) NOT NULL,
    seq BIGINT UNSIGNED NOT NULL,
    received_at DATETIME(3) NOT NULL,
    refrigerant VARCHAR(16) NOT NULL COMMENT 'refrigerant the conversion used',
    box_air_c DOUBLE NOT NULL,
    suction_kpa_g DOUBLE NOT NULL,
    suction_line_c DOUBLE NOT NULL,
    saturated_suction_c DOUBLE NULL,
    superheat_k DOUBLE NULL,
    coil_inlet_c DOUBLE NULL,
    discharge_air_c DOUBLE NULL,
    liquid_kpa_g DOUBLE NULL,
    liquid_line_c DOUBLE NULL,
    subcooling_k DOUBLE NULL,
    valve_steps INT NULL,
    valve_percent DOUBLE NULL,
    compressor_on TINYINT(1) NOT NULL,
    fan_on TINYINT(1) NOT NULL,
    defrost_on TINYINT(1) NOT NULL,
    door_open TINYINT(1) NOT NULL,
    PRIMARY KEY (box_id, ts)
  ) ENGINE=InnoDB
  PARTITION BY RANGE COLUMNS(ts) (PARTITION p00000000 VALUES LESS THAN ('2026-01-01'), PARTITION pmax VALUES LESS THAN (MAXVALUE))`,
  rollup('readings_1m'),
  rollup('readings_15m'),
  rollup('readings_1h'),
  `CREATE TABLE box_latest (
    box_id INT UNSIGNED NOT NULL PRIMARY KEY,
    ts DATETIME(3) NOT NULL,
    reading LONGTEXT NOT NULL COMMENT 'ReadingDto JSON'
  ) ENGINE=InnoDB COMMENT 'no foreign key: a deleted box must never fail an ingest batch'`,
  `CREATE TABLE settings_changes (
    id CHAR(36) NOT NULL PRIMARY KEY,
    box_id INT UNSIGNED NOT NULL,
    requested LONGTEXT NOT NULL,
    applied LONGTEXT NULL,
    state ENUM('pending','applied','rejected','timed-out') NOT NULL,
    override_reason VARCHAR(500) NULL,
    requested_by INT UNSIGNED NOT NULL,
    requested_at DATETIME(3) NOT NULL,
    resolved_at DATETIME(3) NULL,
    error VARCHAR(200) NULL,
    KEY ix_settings_box (box_id, requested_at),
    KEY ix_settings_state (state, requested_at),
    CONSTRAINT fk_settings_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
];

export const up: Migration = async ({ context }) => {
  for (const sql of TABLES) await context.sequelize.query(sql);
};

export const down: Migration = async ({ context }) => {
  for (const t of ['settings_changes', 'box_latest', 'readings_1h', 'readings_15m', 'readings_1m', 'readings']) {
    await context.sequelize.query(`DROP TABLE IF EXISTS ${t}`);
  }
};
