import { z } from 'zod';

/** Query string of every list endpoint: 1-based page, up to 200 rows. */
export const PageQuery = z.object({
  page: z.coerce.number().int().min(1).default(1),
  pageSize: z.coerce.number().int().min(1).max(200).default(50),
  q: z.string().trim().max(100).optional(),
});
export type PageQuery = z.infer<typeof PageQuery>;

/** Answer of every list endpoint. */
export interface Page<T> {
  items: T[];
  page: number;
  pageSize: number;
  total: number;
}

/** A numeric id in a path. */
export const IdParam = z.object({ id: z.coerce.number().int().positive() });

/** RFC 9457 problem details as the API sends them. */
export interface ProblemDetails {
  type: string;
  title: string;
  status: number;
  detail?: string;
  instance?: string;
  /** Field errors of a validation problem: path → messages. */
  errors?: Record<string, string[]>;
  requestId?: string;
}

/** IANA time zone name check without a Node dependency (Intl is in both runtimes). */
export const TimeZone = z.string().refine((tz) => {
  try {
    new Intl.DateTimeFormat('en-US', { timeZone: tz });
    return true;
  } catch {
    return false;
  }
}, 'Unknown time zone; use an IANA name such as America/Chicago');
