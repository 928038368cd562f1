/** GET /api/v1/health: database and broker status, no sign-in needed. */
import { Router } from 'express';
import { QueryTypes } from 'sequelize';
import type { AppContext } from '../context';

export const VERSION = '0.1.0';

/** The health router. */
export function healthRoutes(ctx: AppContext): Router {
  const r = Router();
  r.get('/health', async (_req, res) => {
    let db: 'up' | 'down' = 'down';
    try {
      await ctx.sequelize.query('SELECT 1 AS ok', { type: QueryTypes.SELECT });
      db = 'up';
    } catch {
      db = 'down';
    }
    const broker = ctx.broker.mode === 'none' ? 'disabled' : ctx.broker.state();
    const ok = db === 'up' && broker !== 'down';
    res.status(ok ? 200 : 503).json({ status: ok ? 'ok' : 'degraded', db, broker, brokerMode: ctx.broker.mode, version: VERSION, time: new Date().toISOString() });
  });
  return r;
}
