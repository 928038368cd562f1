/** Weekly trends and the weekly report e-mail: query and body schemas, and the answer shapes. */
import { z } from 'zod';

/** An ISO 8601 week, `YYYY-Www` (weeks 01–53; whether week 53 exists is checked in shared/records/trends.ts). */
export const IsoWeek = z.string().regex(/^\d{4}-W(0[1-9]|[1-4]\d|5[0-3])$/, 'an ISO week such as 2026-W47');

/** `?week=` of the trends endpoints; unset = the last full week in the site's time zone. */
export const TrendsQuery = z.object({ week: IsoWeek.optional() });
export type TrendsQuery = z.infer<typeof TrendsQuery>;

/** Body of POST /reports/weekly/send: one site (or every site) for one week (or the last full one). */
export const WeeklySendBody = z.object({ siteId: z.number().int().positive().optional(), week: IsoWeek.optional() }).strict();
export type WeeklySendBody = z.infer<typeof WeeklySendBody>;

/** Query of GET /reports/weekly besides the page: only one site's reports. */
export const WeeklyReportsQuery = z.object({ siteId: z.coerce.number().int().positive().optional() });
export type WeeklyReportsQuery = z.infer<typeof WeeklyReportsQuery>;

/** One hour of a box's week (from the 1 h rollup). */
export interface TrendHourDto {
  ts: string;
  boxAirMeanC: number;
  boxAirMinC: number;
  boxAirMaxC: number;
  superheatMeanK: number | null;
  valveMeanPercent: number | null;
}

/** One site-local day of a box's week. */
export interface TrendDayDto {
  day: string;
  /** Time the readings cover, min. */
  coveredMin: number;
  compressorDutyPercent: number | null;
  defrostCount: number;
  /** Mean length of the defrosts that started this day, min (null without a defrost). */
  defrostMeanMin: number | null;
  /** Time in defrost by the rollups, min. */
  defrostMin: number;
  doorOpenMin: number;
  boxAirMeanC: number | null;
  boxAirMinC: number | null;
  boxAirMaxC: number | null;
  timeInRangePercent: number | null;
  minutesAboveLimit: number;
}

/** One bin of the superheat distribution: time with a 15-min mean superheat in [fromK, toK). */
export interface SuperheatBinDto {
  fromK: number;
  toK: number;
  minutes: number;
}

/** The week's summary figures. */
export interface TrendSummaryDto {
  coveredMin: number;
  /** Covered time whose 15-min mean box air was within [low limit, high limit], min (a site's % is weighted by it). */
  inRangeMin: number;
  timeInRangePercent: number | null;
  minutesAboveLimit: number;
  /** Runs of consecutive 15-min buckets with mean box air above the high limit, and the longest one, min. */
  excursionCount: number;
  longestExcursionMin: number;
  compressorDutyPercent: number | null;
  /** Compressor running time, min (a site's duty is weighted by it). */
  compressorMin: number;
  doorOpenMin: number;
  defrostCount: number;
  alarmCount: number;
  alarmsByRule: Record<string, number>;
  acknowledgedCount: number;
  meanTimeToAckMin: number | null;
}

/** A known signature found in the data, in plain words, with the figures that raised it. */
export interface TrendFindingDto {
  id: 'superheat-high-valve-open' | 'defrost-on-time' | 'duty-rising' | 'door-open-high';
  boxId: number;
  boxName: string;
  title: string;
  text: string;
  figures: Record<string, number>;
}

/** The week bounds in the site's zone. */
export interface TrendWeekDto {
  week: string;
  from: string;
  to: string;
  hours: number;
  days: string[];
  timeZone: string;
}

/** A box's trends for one week and the week before. */
export interface BoxTrendDto {
  boxId: number;
  boxName: string;
  siteId: number;
  siteName: string;
  kind: string;
  setpointC: number;
  highLimitC: number;
  lowLimitC: number;
  superheatTargetK: number;
  superheatBandK: { lowK: number; highK: number };
  week: TrendWeekDto;
  previousWeek: TrendWeekDto;
  hours: TrendHourDto[];
  previousHours: TrendHourDto[];
  days: TrendDayDto[];
  previousDays: TrendDayDto[];
  superheatBins: SuperheatBinDto[];
  previousSuperheatBins: SuperheatBinDto[];
  summary: TrendSummaryDto;
  previousSummary: TrendSummaryDto;
  findings: TrendFindingDto[];
  /** What the figures cannot say (e.g. no raw readings left for defrost counts). */
  notes: string[];
}

/** A site's trends: every box, the site's totals and every box's findings. */
export interface SiteTrendDto {
  siteId: number;
  siteName: string;
  week: TrendWeekDto;
  summary: TrendSummaryDto;
  previousSummary: TrendSummaryDto;
  boxes: BoxTrendDto[];
  findings: TrendFindingDto[];
}

/** One row of the sent-reports list. */
export interface WeeklyReportDto {
  id: number;
  recipientUserId: number;
  recipientEmail: string;
  siteId: number;
  siteName: string;
  isoWeek: string;
  status: 'sending' | 'sent' | 'failed';
  attempts: number;
  error: string | null;
  createdAt: string;
  sentAt: string | null;
}
