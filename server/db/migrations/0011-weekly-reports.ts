/**
 * Weekly report e-mails: one row per recipient, site and ISO week (the unique key makes a report go
 * out once even when the job runs twice or concurrently). The row is inserted before the mail is
 * sent (status 'sending'), then marked 'sent' or 'failed'; failed rows and rows left 'sending' by a
 * crash are retried by the next run. `figures` keeps what the mail said, for the list.
 */
import type { Migration } from '../migrate';

export const up: Migration = async ({ context }) => {
  await context.sequelize.query(`CREATE TABLE weekly_reports (
    id INT UNSIGNED NOT NULL AUTO_INCREMENT PRIMARY KEY,
    recipient_user_id INT UNSIGNED NOT NULL,
    site_id INT UNSIGNED NOT NULL,
    iso_week CHAR(8) NOT NULL COMMENT 'YYYY-Www in the site''s time zone',
    recipient_email VARCHAR(190) NOT NULL,
    status ENUM('sending','sent','failed') NOT NULL,
    attempts INT UNSIGNED NOT NULL DEFAULT 1,
    claim_token CHAR(36) NOT NULL COMMENT 'the run that holds the row while sending',
    claimed_at DATETIME(3) NOT NULL,
    error VARCHAR(300) NULL,
    figures LONGTEXT NULL COMMENT 'JSON of the summary figures the mail carried',
    created_at DATETIME(3) NOT NULL,
    sent_at DATETIME(3) NULL,
    UNIQUE KEY uq_weekly_reports (recipient_user_id, site_id, iso_week),
    KEY ix_weekly_reports_status (status, claimed_at),
    KEY ix_weekly_reports_site (site_id, iso_week),
    CONSTRAINT fk_weekly_reports_user FOREIGN KEY (recipient_user_id) REFERENCES users(id) ON DELETE CASCADE,
    CONSTRAINT fk_weekly_reports_site FOREIGN KEY (site_id) REFERENCES sites(id) ON DELETE CASCADE
  ) ENGINE=InnoDB`);
};

export const down: Migration = async ({ context }) => {
  await context.sequelize.query('DROP TABLE IF EXISTS weekly_reports');
};
