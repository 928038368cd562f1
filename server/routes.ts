/** Feature routers mounted under /api/v1 (after auth and CSRF). */
import type { Router } from 'express';
import type { AppContext } from './context';

/** Mounts every feature's router on the API router. */
export function registerFeatureRoutes(api: Router, ctx: AppContext): void {
  void api;
  void ctx;
}
