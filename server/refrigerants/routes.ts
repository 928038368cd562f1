/** /api/v1/refrigerants (signed in): the refrigerants Rimehold knows, with their facts. */
import { Router } from 'express';
import { listRefrigerants } from '../../shared/refrigerants';
import { requireAuth } from '../auth/guards';

/** The refrigerants router. */
export function refrigerantRoutes(): Router {
  const r = Router();
  r.get('/', requireAuth, (_req, res) => {
    res.json(listRefrigerants());
  });
  return r;
}
