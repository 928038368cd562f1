/** Per-box overrides of alarm rule defaults (shared/rules/defaults.ts): one row per box and rule; a NULL field keeps the default. */
import type { Migration } from '../migrate';

const RULES = `'box-air-high','box-air-low','superheat-low','superheat-high','defrost-overtime','defrost-timed-termination','door-open','short-cycling','long-run','pump-down-failure','sensor-fault','controller-offline'`;
const PRIORITIES = `'low','medium','high','critical'`;

export const up: Migration = async ({ context }) => {
  await context.sequelize.query(`CREATE TABLE box_rule_overrides (
    box_id INT UNSIGNED NOT NULL,
    rule_id ENUM(${RULES}) NOT NULL,
    enabled TINYINT(1) NULL,
    threshold DOUBLE NULL COMMENT 'in the rule''s own unit (°C limits, K superheat, min, counts)',
    delay_min DOUBLE NULL,
    clear_delay_min DOUBLE NULL,
    deadband DOUBLE NULL COMMENT 'in the threshold''s unit (K for temperatures)',
    priority ENUM(${PRIORITIES}) NULL,
    updated_by INT UNSIGNED NULL,
    updated_at DATETIME(3) NOT NULL,
    PRIMARY KEY (box_id, rule_id),
    CONSTRAINT fk_rule_overrides_box FOREIGN KEY (box_id) REFERENCES boxes(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`);
};

export const down: Migration = async ({ context }) => {
  await context.sequelize.query('DROP TABLE IF EXISTS box_rule_overrides');
};
