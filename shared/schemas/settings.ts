import { z } from 'zod';
import { ConfigSetPayload } from './telemetry';

/**
 * PUT /api/v1/boxes/:id/settings. A superheat target below the compressor-protection minimum is
 * refused unless `override` carries a reason.
 */
export const BoxSettingsBody = ConfigSetPayload.omit({ id: true })
  .extend({ override: z.object({ reason: z.string().trim().min(10, 'Give a reason of at least 10 characters').max(500) }).optional() })
  .strict()
  .refine((b) => Object.keys(b).some((k) => k !== 'override'), { message: 'Change at least one setting' });
export type BoxSettingsBody = z.infer<typeof BoxSettingsBody>;

export type SettingsChangeState = 'pending' | 'applied' | 'rejected' | 'timed-out';

export interface SettingsChangeDto {
  id: string;
  boxId: number;
  requested: Record<string, unknown>;
  applied: Record<string, unknown> | null;
  state: SettingsChangeState;
  requestedBy: number;
  requestedAt: string;
  resolvedAt: string | null;
  error: string | null;
}
