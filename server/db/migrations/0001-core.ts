/** Core domain: customers, sites, boxes, controllers, users, audit log, sessions. */
import type { Migration } from '../migrate';

const TABLES = [
  `CREATE TABLE customers (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    name VARCHAR(120) NOT NULL,
    contact_name VARCHAR(120) NULL,
    contact_email VARCHAR(190) NULL,
    contact_phone VARCHAR(40) NULL,
    notes TEXT NULL,
    created_at DATETIME(3) NOT NULL,
    updated_at DATETIME(3) NOT NULL,
    UNIQUE KEY uq_customers_name (name)
  ) ENGINE=InnoDB`,
  `CREATE TABLE sites (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    customer_id INT UNSIGNED NOT NULL,
    name VARCHAR(120) NOT NULL,
    address VARCHAR(300) NULL,
    time_zone VARCHAR(64) NOT NULL,
    elevation_m DOUBLE NOT NULL DEFAULT 0,
    created_at DATETIME(3) NOT NULL,
    updated_at DATETIME(3) NOT NULL,
    KEY ix_sites_customer (customer_id),
    CONSTRAINT fk_sites_customer FOREIGN KEY (customer_id) REFERENCES customers(id) ON DELETE RESTRICT
  ) ENGINE=InnoDB`,
  `CREATE TABLE boxes (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    site_id INT UNSIGNED NOT NULL,
    customer_id INT UNSIGNED NOT NULL COMMENT 'copy of sites.customer_id for tenant scoping',
    name VARCHAR(80) NOT NULL,
    kind ENUM('cooler','freezer') NOT NULL,
    setpoint_c DOUBLE NOT NULL,
    differential_k DOUBLE NOT NULL,
    high_limit_c DOUBLE NOT NULL,
    low_limit_c DOUBLE NOT NULL,
    alarm_delay_min INT NOT NULL,
    door_alarm_delay_min INT NOT NULL,
    refrigerant VARCHAR(16) NOT NULL,
    valve_type ENUM('eev','txv') NOT NULL,
    saturation_method ENUM('pressure','coil-thermistor') NOT NULL,
    superheat_target_k DOUBLE NOT NULL,
    defrost_type ENUM('off-cycle','electric','hot-gas') NOT NULL,
    defrost_interval_h DOUBLE NOT NULL,
    defrost_max_min DOUBLE NOT NULL,
    defrost_termination_c DOUBLE NOT NULL,
    drip_min DOUBLE NOT NULL,
    fan_delay_min DOUBLE NOT NULL,
    created_at DATETIME(3) NOT NULL,
    updated_at DATETIME(3) NOT NULL,
    KEY ix_boxes_site (site_id),
    KEY ix_boxes_customer (customer_id),
    CONSTRAINT fk_boxes_site FOREIGN KEY (site_id) REFERENCES sites(id) ON DELETE RESTRICT,
    CONSTRAINT fk_boxes_customer FOREIGN KEY (customer_id) REFERENCES customers(id) ON DELETE RESTRICT
  ) ENGINE=InnoDB`,
  `CREATE TABLE controllers (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    box_id INT UNSIGNED NOT NULL,
    serial VARCHAR(40) NOT NULL,
    secret_hash VARCHAR(100) NOT NULL,
    valve_full_steps INT NOT NULL DEFAULT 1600,
    firmware VARCHAR(40) NULL,
    last_seen_at DATETIME(3) NULL,
    online TINYINT(1) NOT NULL DEFAULT 0,
    disabled TINYINT(1) NOT NULL DEFAULT 0,
    secret_rotated_at DATETIME(3) NULL,
    created_at DATETIME(3) NOT NULL,
    updated_at DATETIME(3) NOT NULL,
    UNIQUE KEY uq_controllers_serial (serial),
    UNIQUE KEY uq_controllers_box (box_id),
    CONSTRAINT fk_controllers_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE users (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    email VARCHAR(190) NOT NULL,
    name VARCHAR(120) NOT NULL,
    password_hash VARCHAR(100) NULL,
    role ENUM('admin','technician','manager') NOT NULL,
    customer_id INT UNSIGNED NULL,
    unit_system ENUM('imperial','metric-bar','metric-kpa') NOT NULL DEFAULT 'imperial',
    disabled TINYINT(1) NOT NULL DEFAULT 0,
    invite_token_hash CHAR(64) NULL,
    invite_expires_at DATETIME(3) NULL,
    invited_at DATETIME(3) NULL,
    last_login_at DATETIME(3) NULL,
    failed_logins INT NOT NULL DEFAULT 0,
    locked_until DATETIME(3) NULL,
    created_at DATETIME(3) NOT NULL,
    updated_at DATETIME(3) NOT NULL,
    UNIQUE KEY uq_users_email (email),
    KEY ix_users_invite (invite_token_hash),
    CONSTRAINT fk_users_customer FOREIGN KEY (customer_id) REFERENCES customers(id) ON DELETE RESTRICT
  ) ENGINE=InnoDB`,
  `CREATE TABLE audit_entries (
    id BIGINT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    at DATETIME(3) NOT NULL,
    user_id INT UNSIGNED NULL,
    action VARCHAR(64) NOT NULL,
    entity_type VARCHAR(32) NOT NULL,
    entity_id VARCHAR(64) NULL,
    customer_id INT UNSIGNED NULL,
    detail LONGTEXT NULL,
    request_id VARCHAR(64) NULL,
    KEY ix_audit_at (at),
    KEY ix_audit_entity (entity_type, entity_id)
  ) ENGINE=InnoDB`,
  // Columns of connect-session-sequelize's default model, underscored by our `define` options.
  `CREATE TABLE sessions (
    sid VARCHAR(36) NOT NULL PRIMARY KEY,
    expires DATETIME NULL,
    data TEXT NULL,
    created_at DATETIME NOT NULL,
    updated_at DATETIME NOT NULL,
    KEY ix_sessions_expires (expires)
  ) ENGINE=InnoDB`,
];

export const up: Migration = async ({ context }) => {
  for (const sql of TABLES) await context.sequelize.query(sql);
};

export const down: Migration = async ({ context }) => {
  for (const t of ['sessions', 'audit_entries', 'users', 'controllers', 'boxes', 'sites', 'customers']) {
    await context.sequelize.query(`DROP TABLE IF EXISTS ${t}`);
  }
};
