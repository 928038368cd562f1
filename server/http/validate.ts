/** Request parsing with the shared zod schemas: a failure becomes a 400 problem with field errors. */
import type { Request } from 'express';
import type { z } from 'zod';
import { IdParam, PageQuery, type Page } from '../../shared/schemas/common';
import { problems } from './problem';

/** Parses the JSON body with a schema. */
export function parseBody<S extends z.ZodType>(schema: S, req: Request): z.infer<S> {
  const r = schema.safeParse(req.body ?? {});
  if (!r.success) throw problems.validation(r.error);
  return r.data;
}

/** Parses the query string with a schema. */
export function parseQuery<S extends z.ZodType>(schema: S, req: Request): z.infer<S> {
  const r = schema.safeParse(req.query);
  if (!r.success) throw problems.validation(r.error, 'query string');
  return r.data;
}

/** The numeric `:id` of the path. */
export function parseId(req: Request, name = 'id'): number {
  const r = IdParam.safeParse({ id: req.params[name] });
  if (!r.success) throw problems.notFound();
  return r.data.id;
}

/** Page query plus the SQL offset. */
export function pageOf(req: Request): PageQuery & { offset: number } {
  const p = parseQuery(PageQuery, req);
  return { ...p, offset: (p.page - 1) * p.pageSize };
}

/** Wraps rows and a total into the list answer. */
export function pageResult<T>(items: T[], total: number, p: PageQuery): Page<T> {
  return { items, page: p.page, pageSize: p.pageSize, total };
}
