/**
 * Service visits (with linked alarms, charging checks and attachments) and the refrigerant log
 * (one system row per box, append-only additions and recoveries). Masses are kg, pressures kPa(g),
 * temperatures °C, differences K. Box and site foreign keys cascade, as the alarms of a box do.
 */
import type { Migration } from '../migrate';

const TABLES = [
  `CREATE TABLE service_visits (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    customer_id INT UNSIGNED NOT NULL COMMENT 'copy of sites.customer_id for tenant scoping',
    site_id INT UNSIGNED NOT NULL,
    box_id INT UNSIGNED NULL COMMENT 'NULL: a visit on the whole site',
    visited_on DATE NOT NULL,
    technician_id INT UNSIGNED NOT NULL,
    findings TEXT NOT NULL,
    work_done TEXT NOT NULL,
    parts TEXT NOT NULL COMMENT 'JSON array of {name, qty}',
    time_on_site_min INT UNSIGNED NOT NULL,
    status ENUM('open','closed') NOT NULL DEFAULT 'open',
    closed_at DATETIME(3) NULL,
    closed_by INT UNSIGNED NULL,
    check_refrigerant VARCHAR(16) NULL COMMENT 'the box refrigerant the checks were computed for',
    check_elevation_m DOUBLE NULL,
    suction_kpa_g DOUBLE NULL,
    suction_line_c DOUBLE NULL,
    liquid_kpa_g DOUBLE NULL,
    liquid_line_c DOUBLE NULL,
    saturated_suction_c DOUBLE NULL COMMENT 'dew point at the suction pressure (shared engine)',
    superheat_k DOUBLE NULL,
    saturated_liquid_c DOUBLE NULL COMMENT 'bubble point at the liquid pressure (shared engine)',
    subcooling_k DOUBLE NULL,
    high_side_state ENUM('subcritical','supercritical') NULL,
    check_notes TEXT NULL COMMENT 'JSON array of notes from the computation',
    sight_glass_clear TINYINT(1) NULL,
    receiver_level_percent DOUBLE NULL,
    created_by INT UNSIGNED NOT NULL,
    created_at DATETIME(3) NOT NULL,
    updated_at DATETIME(3) NOT NULL,
    KEY ix_visits_customer (customer_id, visited_on),
    KEY ix_visits_box (box_id, visited_on),
    KEY ix_visits_site (site_id, visited_on),
    CONSTRAINT fk_visits_site FOREIGN KEY (site_id) REFERENCES sites(id) ON DELETE CASCADE,
    CONSTRAINT fk_visits_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE service_visit_alarms (
    visit_id INT UNSIGNED NOT NULL,
    alarm_id INT UNSIGNED NOT NULL,
    PRIMARY KEY (visit_id, alarm_id),
    KEY ix_visit_alarms_alarm (alarm_id),
    CONSTRAINT fk_visit_alarms_visit FOREIGN KEY (visit_id) REFERENCES service_visits(id) ON DELETE CASCADE,
    CONSTRAINT fk_visit_alarms_alarm FOREIGN KEY (alarm_id) REFERENCES alarms(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE visit_attachments (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    visit_id INT UNSIGNED NOT NULL,
    customer_id INT UNSIGNED NOT NULL,
    content_type ENUM('image/jpeg','image/png','image/webp','application/pdf') NOT NULL COMMENT 'detected from the bytes',
    size_bytes INT UNSIGNED NOT NULL,
    storage_name CHAR(36) NOT NULL COMMENT 'random UUID: the file name under UPLOADS_DIR',
    has_thumb TINYINT(1) NOT NULL DEFAULT 0 COMMENT 'UUID.thumb.jpg beside it',
    file_name VARCHAR(120) NOT NULL COMMENT 'sanitised client name, for Content-Disposition only',
    uploaded_by INT UNSIGNED NOT NULL,
    created_at DATETIME(3) NOT NULL,
    UNIQUE KEY ux_attachments_storage (storage_name),
    KEY ix_attachments_visit (visit_id),
    CONSTRAINT fk_attachments_visit FOREIGN KEY (visit_id) REFERENCES service_visits(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE refrigerant_systems (
    box_id INT UNSIGNED NOT NULL PRIMARY KEY,
    customer_id INT UNSIGNED NOT NULL,
    full_charge_kg DOUBLE NOT NULL,
    appliance_type ENUM('commercial-refrigeration','industrial-process-refrigeration','comfort-cooling') NOT NULL,
    full_charge_date DATE NULL,
    updated_by INT UNSIGNED NOT NULL,
    updated_at DATETIME(3) NOT NULL,
    CONSTRAINT fk_refrigerant_systems_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE refrigerant_entries (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    box_id INT UNSIGNED NOT NULL,
    customer_id INT UNSIGNED NOT NULL,
    kind ENUM('addition','recovery') NOT NULL,
    amount_kg DOUBLE NOT NULL,
    entered_amount DOUBLE NOT NULL,
    entered_unit ENUM('lb','kg') NOT NULL,
    occurred_on DATE NOT NULL,
    refrigerant VARCHAR(16) NOT NULL COMMENT 'the box refrigerant when entered',
    technician_id INT UNSIGNED NOT NULL,
    cylinder_id VARCHAR(40) NOT NULL,
    reason VARCHAR(300) NOT NULL,
    exemption ENUM('after-retrofit','new-installation','seasonal-variance') NULL COMMENT '40 CFR 82.157(b)',
    same_leak_as_previous TINYINT(1) NOT NULL DEFAULT 0,
    created_by INT UNSIGNED NOT NULL,
    created_at DATETIME(3) NOT NULL,
    KEY ix_refrigerant_entries_box (box_id, occurred_on),
    CONSTRAINT fk_refrigerant_entries_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
];

export const up: Migration = async ({ context }) => {
  for (const sql of TABLES) await context.sequelize.query(sql);
};

export const down: Migration = async ({ context }) => {
  for (const t of ['refrigerant_entries', 'refrigerant_systems', 'visit_attachments', 'service_visit_alarms', 'service_visits']) await context.sequelize.query(`DROP TABLE IF EXISTS ${t}`);
};
