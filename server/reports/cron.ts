/**
 * The weekly report job on node-cron 4: runs at minute 0 of every hour, in UTC (no DST gaps in the
 * schedule itself); each run sends the reports of the sites whose local time is Monday from 07:00
 * (server/reports/weekly.ts decides per site zone). noOverlap keeps one run at a time in this process;
 * the weekly_reports unique key keeps concurrent runs (or processes) from sending twice.
 */
import cron from 'node-cron';
import type { AppContext } from '../context';
import { runWeeklyReports } from './weekly';

/** The cron expression of the job: every hour at minute 0 (UTC). */
export const WEEKLY_REPORT_CRON = '0 * * * *';

/** Schedules the hourly weekly-report job; returns a function that stops it. */
export function scheduleWeeklyReports(ctx: AppContext): () => Promise<void> {
  const task = cron.schedule(
    WEEKLY_REPORT_CRON,
    async () => {
      try {
        const results = await runWeeklyReports(ctx);
        const sent = results.reduce((s, r) => s + r.sent, 0);
        if (results.length) ctx.logger.info({ sites: results.length, sent }, 'weekly reports run');
      } catch (err) {
        ctx.logger.error({ err }, 'weekly reports run failed');
      }
    },
    { name: 'weekly-reports', timezone: 'UTC', noOverlap: true },
  );
  return async () => {
    await task.stop();
    await task.destroy();
  };
}
