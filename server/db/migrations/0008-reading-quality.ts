/**
 * Reading quality: why a derived value is missing or doubtful is stored with the reading
 * (`quality_flags`, a JSON array of ReadingFlag), with the glide of a two-thermistor reading
 * (`glide_k`); the gauge reference of each controller's suction transducer; and the history of the
 * box settings the conversion depends on (refrigerant, site elevation, gauge reference), so a
 * reading replayed from a controller's buffer is converted with the settings valid at its time.
 */
import type { Migration } from '../migrate';

const GAUGE_REFS = `'vented-gauge','sealed-gauge','absolute'`;

export const up: Migration = async ({ context }) => {
  const q = (sql: string) => context.sequelize.query(sql);
  await q(`ALTER TABLE readings
    ADD COLUMN quality_flags TEXT NULL COMMENT 'JSON array of ReadingFlag: sensor faults, conversion notes, glide, negative subcooling',
    ADD COLUMN glide_k DOUBLE NULL COMMENT 'glide at the coil-inlet reading (two-thermistor method), K'`);
  await q(`ALTER TABLE controllers ADD COLUMN gauge_reference ENUM(${GAUGE_REFS}) NOT NULL DEFAULT 'vented-gauge' COMMENT 'what the suction transducer reads against'`);
  await q(`CREATE TABLE box_settings_history (
    id BIGINT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    box_id INT UNSIGNED NOT NULL,
    valid_from DATETIME(3) NOT NULL,
    refrigerant VARCHAR(16) NOT NULL,
    elevation_m DOUBLE NOT NULL,
    gauge_reference ENUM(${GAUGE_REFS}) NOT NULL,
    KEY ix_bsh_box (box_id, valid_from),
    CONSTRAINT fk_bsh_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE
  ) ENGINE=InnoDB COMMENT 'conversion settings of a box from valid_from on'`);
  // Existing boxes: their present settings, valid since before any reading.
  await q(`INSERT INTO box_settings_history (box_id, valid_from, refrigerant, elevation_m, gauge_reference)
    SELECT b.id, '1970-01-01 00:00:00.000', b.refrigerant, s.elevation_m, COALESCE(c.gauge_reference, 'vented-gauge')
    FROM boxes b JOIN sites s ON s.id = b.site_id LEFT JOIN controllers c ON c.box_id = b.id`);
};

export const down: Migration = async ({ context }) => {
  const q = (sql: string) => context.sequelize.query(sql);
  await q('DROP TABLE IF EXISTS box_settings_history');
  await q('ALTER TABLE controllers DROP COLUMN gauge_reference');
  await q('ALTER TABLE readings DROP COLUMN quality_flags, DROP COLUMN glide_k');
};
