import { z } from 'zod';
import { TimeZone } from './common';

export const CustomerBody = z.object({
  name: z.string().trim().min(1, 'Enter a name').max(120),
  contactName: z.string().trim().max(120).nullable().default(null),
  contactEmail: z.string().trim().toLowerCase().email().max(190).nullable().default(null),
  contactPhone: z.string().trim().max(40).nullable().default(null),
  notes: z.string().max(2000).nullable().default(null),
});
export type CustomerBody = z.infer<typeof CustomerBody>;

export interface CustomerDto extends CustomerBody {
  id: number;
  siteCount: number;
  createdAt: string;
  updatedAt: string;
}

export const SiteBody = z.object({
  customerId: z.number().int().positive(),
  name: z.string().trim().min(1, 'Enter a name').max(120),
  address: z.string().trim().max(300).nullable().default(null),
  timeZone: TimeZone,
  /** Metres above sea level; converts gauge to absolute pressure (Dead Sea −430 m to ~5,000 m). */
  elevationM: z.number().min(-450).max(5000),
});
export type SiteBody = z.infer<typeof SiteBody>;

export interface SiteDto extends SiteBody {
  id: number;
  customerName: string;
  boxCount: number;
  createdAt: string;
  updatedAt: string;
}
