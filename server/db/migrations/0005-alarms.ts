/**
 * Alarms (ISA-18.2 states), their transitions and notifications, single-use acknowledgement links,
 * rule-engine snapshots (so a restart re-arms delays), box maintenance windows, on-call rotations
 * with overrides and escalation policies.
 */
import type { Migration } from '../migrate';

const RULES = `'box-air-high','box-air-low','superheat-low','superheat-high','defrost-overtime','defrost-timed-termination','door-open','short-cycling','long-run','pump-down-failure','sensor-fault','controller-offline'`;
const STATES = `'normal','unacknowledged','acknowledged','rtn-unacknowledged','shelved','suppressed','out-of-service'`;
const ACTIONS = `'raise','clear','ack','shelve','unshelve','shelve-expired','suppress','unsuppress','remove-from-service','return-to-service'`;
const PRIORITIES = `'low','medium','high','critical'`;

const TABLES = [
  `CREATE TABLE alarms (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    box_id INT UNSIGNED NOT NULL,
    site_id INT UNSIGNED NOT NULL,
    customer_id INT UNSIGNED NOT NULL COMMENT 'copy of boxes.customer_id for tenant scoping',
    rule_id ENUM(${RULES}) NOT NULL,
    priority ENUM(${PRIORITIES}) NOT NULL,
    state ENUM(${STATES}) NOT NULL,
    condition_active TINYINT(1) NOT NULL,
    value DOUBLE NULL,
    message VARCHAR(500) NOT NULL,
    raised_at DATETIME(3) NOT NULL,
    cleared_at DATETIME(3) NULL,
    acknowledged_at DATETIME(3) NULL,
    acknowledged_by INT UNSIGNED NULL,
    shelved_until DATETIME(3) NULL,
    reopen_count INT UNSIGNED NOT NULL DEFAULT 0,
    escalation_step INT NOT NULL DEFAULT -1 COMMENT 'last escalation step notified (-1: none yet)',
    next_escalation_at DATETIME(3) NULL,
    created_at DATETIME(3) NOT NULL,
    updated_at DATETIME(3) NOT NULL,
    KEY ix_alarms_box_rule (box_id, rule_id, id),
    KEY ix_alarms_customer_state (customer_id, state, raised_at),
    KEY ix_alarms_escalation (next_escalation_at),
    KEY ix_alarms_shelved (shelved_until),
    CONSTRAINT fk_alarms_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE alarm_transitions (
    id BIGINT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    alarm_id INT UNSIGNED NOT NULL,
    at DATETIME(3) NOT NULL,
    action ENUM(${ACTIONS}) NOT NULL,
    from_state ENUM(${STATES}) NOT NULL,
    to_state ENUM(${STATES}) NOT NULL,
    user_id INT UNSIGNED NULL,
    note VARCHAR(500) NULL,
    KEY ix_transitions_alarm (alarm_id, at),
    CONSTRAINT fk_transitions_alarm FOREIGN KEY (alarm_id) REFERENCES alarms(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE alarm_notifications (
    id BIGINT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    alarm_id INT UNSIGNED NOT NULL,
    at DATETIME(3) NOT NULL,
    channel ENUM('email','push') NOT NULL,
    recipient VARCHAR(190) NOT NULL,
    user_id INT UNSIGNED NULL,
    status ENUM('sent','failed') NOT NULL,
    error VARCHAR(300) NULL,
    level INT UNSIGNED NOT NULL,
    KEY ix_notifications_alarm (alarm_id, at),
    CONSTRAINT fk_notifications_alarm FOREIGN KEY (alarm_id) REFERENCES alarms(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE alarm_ack_tokens (
    token_hash CHAR(64) NOT NULL PRIMARY KEY,
    alarm_id INT UNSIGNED NOT NULL,
    user_id INT UNSIGNED NULL COMMENT 'the recipient the link was mailed to',
    expires_at DATETIME(3) NOT NULL,
    used_at DATETIME(3) NULL,
    used_by INT UNSIGNED NULL,
    KEY ix_ack_tokens_alarm (alarm_id),
    CONSTRAINT fk_ack_tokens_alarm FOREIGN KEY (alarm_id) REFERENCES alarms(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE box_engine_snapshots (
    box_id INT UNSIGNED NOT NULL PRIMARY KEY,
    snapshot LONGTEXT NOT NULL COMMENT 'EngineSnapshot JSON',
    saved_at DATETIME(3) NOT NULL,
    CONSTRAINT fk_snapshots_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE box_maintenance (
    box_id INT UNSIGNED NOT NULL PRIMARY KEY,
    until_at DATETIME(3) NOT NULL,
    note VARCHAR(200) NULL,
    set_by INT UNSIGNED NULL,
    set_at DATETIME(3) NOT NULL,
    CONSTRAINT fk_maintenance_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE oncall_rotations (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    name VARCHAR(120) NOT NULL,
    time_zone VARCHAR(64) NOT NULL,
    shifts LONGTEXT NOT NULL COMMENT 'OncallShift[] JSON (weekly, in time_zone)',
    created_at DATETIME(3) NOT NULL,
    updated_at DATETIME(3) NOT NULL
  ) ENGINE=InnoDB`,
  `CREATE TABLE oncall_overrides (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    rotation_id INT UNSIGNED NOT NULL,
    user_id INT UNSIGNED NOT NULL,
    starts_at DATETIME(3) NOT NULL,
    ends_at DATETIME(3) NOT NULL,
    note VARCHAR(200) NULL,
    created_at DATETIME(3) NOT NULL,
    updated_at DATETIME(3) NOT NULL,
    KEY ix_overrides_rotation (rotation_id, starts_at),
    CONSTRAINT fk_overrides_rotation FOREIGN KEY (rotation_id) REFERENCES oncall_rotations(id) ON DELETE CASCADE,
    CONSTRAINT fk_overrides_user FOREIGN KEY (user_id) REFERENCES users(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`,
  `CREATE TABLE escalation_policies (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    name VARCHAR(120) NOT NULL,
    priorities VARCHAR(100) NULL COMMENT 'comma list of priorities it applies to; NULL: the default policy',
    escalate_after_min DOUBLE NOT NULL,
    levels LONGTEXT NOT NULL COMMENT 'EscalationTarget[][] JSON',
    repeat_highest TINYINT(1) NOT NULL,
    quiet_hours LONGTEXT NULL COMMENT 'QuietHours JSON (low priority only)',
    created_at DATETIME(3) NOT NULL,
    updated_at DATETIME(3) NOT NULL
  ) ENGINE=InnoDB`,
];

export const up: Migration = async ({ context }) => {
  for (const sql of TABLES) await context.sequelize.query(sql);
};

export const down: Migration = async ({ context }) => {
  for (const t of ['escalation_policies', 'oncall_overrides', 'oncall_rotations', 'box_maintenance', 'box_engine_snapshots', 'alarm_ack_tokens', 'alarm_notifications', 'alarm_transitions', 'alarms']) {
    await context.sequelize.query(`DROP TABLE IF EXISTS ${t}`);
  }
};
