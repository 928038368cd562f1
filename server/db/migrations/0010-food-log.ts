/**
 * Food-safety temperature log: each site's reading plan (every foodLogIntervalH hours of local
 * time; no row = the 4 h default) and the log's entries per box and site-local day. Entries of a
 * signed day are never updated or deleted (the service refuses with 409); a correction is a new
 * entry referring to the old one.
 */
import type { Migration } from '../migrate';

export const up: Migration = async ({ context }) => {
  await context.sequelize.query(`CREATE TABLE food_log_site_settings (
    site_id INT UNSIGNED NOT NULL PRIMARY KEY,
    food_log_interval_h TINYINT UNSIGNED NOT NULL COMMENT 'plan: a reading every N hours of local time (divides 24)',
    updated_by INT UNSIGNED NULL,
    updated_at DATETIME(3) NOT NULL,
    CONSTRAINT fk_food_log_settings_site FOREIGN KEY (site_id) REFERENCES sites(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`);
  await context.sequelize.query(`CREATE TABLE food_log_entries (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    box_id INT UNSIGNED NOT NULL,
    customer_id INT UNSIGNED NOT NULL COMMENT 'copy of the box''s, for tenant scope',
    day DATE NOT NULL COMMENT 'site-local day the entry belongs to',
    kind ENUM('corrective-action','note','sign-off','correction') NOT NULL,
    text VARCHAR(2000) NOT NULL,
    by_user_id INT UNSIGNED NULL,
    by_name VARCHAR(120) NOT NULL COMMENT 'name of the user at the time',
    at DATETIME(3) NOT NULL COMMENT 'when the action was taken (UTC)',
    recorded_at DATETIME(3) NOT NULL COMMENT 'when it was entered (UTC)',
    refers_to_id INT UNSIGNED NULL COMMENT 'the entry a correction corrects',
    product_probe_c DOUBLE NULL COMMENT 'product temperature by probe thermometer, °C',
    excursion_start_at DATETIME(3) NULL,
    KEY ix_food_log_box_day (box_id, day),
    CONSTRAINT fk_food_log_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE,
    CONSTRAINT fk_food_log_refers FOREIGN KEY (refers_to_id) REFERENCES food_log_entries(id)
  ) ENGINE=InnoDB`);
};

export const down: Migration = async ({ context }) => {
  await context.sequelize.query('DROP TABLE IF EXISTS food_log_entries');
  await context.sequelize.query('DROP TABLE IF EXISTS food_log_site_settings');
};
