/**
 * One list helper for every list endpoint: the query (`q`, `sort`, `order`, `page`, `pageSize` and
 * the endpoint's own filters) is parsed with one zod schema, the rows are limited to the actor's
 * tenant, searched, filtered, sorted by a whitelisted column (ties broken by id, so paging is
 * stable) and answered as `{ items, total, page, pageSize }`.
 */
import { Op, type FindAndCountOptions, type Includeable, type Model, type ModelStatic, type Order, type WhereOptions } from 'sequelize';
import { z } from 'zod';
import type { SessionUser } from '../../shared/schemas/auth';
import { PageQuery, type Page } from '../../shared/schemas/common';
import { scopedCustomerId } from '../auth/scope';
import { problems } from './problem';
import { contains } from './search';

/** A column path to sort by: an attribute, or an association alias and its attribute. */
export type SortPath = readonly [string] | readonly [string, string];

/** Sort directions as the query string names them. */
export const SORT_ORDERS = ['asc', 'desc'] as const;

/** What one list endpoint allows: searched columns, sortable columns, filters and the tenant scope. */
export interface ListSpec<M extends Model, S extends string, F extends z.ZodRawShape> {
  /** Public sort names (what `?sort=` may say) → the column each sorts by. Anything else is a 400. */
  sorts: Record<S, SortPath>;
  defaultSort: NoInfer<S>;
  /** The condition for `q`, given the escaped `LIKE '%q%'` operand. */
  search?: (like: ReturnType<typeof contains>) => WhereOptions<M>;
  /** Extra query parameters (zod shapes, coerced from text). */
  filters?: F;
  /** The conditions for the parsed filters (absent filters add nothing). */
  filterWhere?: (filter: z.infer<z.ZodObject<F>>) => WhereOptions<M>[];
  /** The rows the actor may see at all (use `scopeByCustomer` or `noScope` to be explicit). */
  scope: (actor: SessionUser) => WhereOptions<M>;
  /** Associations to load with each row (used by sorts and searches on `$alias.column$`). */
  include?: Includeable[];
}

/** A list spec with its query schema built once. */
export interface ListDefinition<M extends Model, S extends string, F extends z.ZodRawShape> extends ListSpec<M, S, F> {
  query: z.ZodType<ListInput<S, z.infer<z.ZodObject<F>>>>;
}

/** A parsed list query: paging, search, sort and the endpoint's filters (`filter`). */
export interface ListInput<S extends string = string, Filter = Record<string, unknown>> {
  page: number;
  pageSize: number;
  q?: string;
  sort: S;
  order: (typeof SORT_ORDERS)[number];
  filter: Filter;
}

/** The parsed query type of a list definition (what its service takes as input). */
export type ListInputOf<D> = D extends ListDefinition<Model, infer S, infer F> ? ListInput<S, z.infer<z.ZodObject<F>>> : never;

/** Builds a list definition: the spec plus the zod schema of its query string. */
export function defineList<M extends Model, S extends string, F extends z.ZodRawShape = Record<never, never>>(spec: ListSpec<M, S, F>): ListDefinition<M, S, F> {
  const names = Object.keys(spec.sorts) as S[];
  const filterShape = (spec.filters ?? {}) as F;
  const filterKeys = Object.keys(filterShape);
  const schema = z
    .object({
      ...PageQuery.shape,
      sort: z
        .string()
        .refine((v) => (names as string[]).includes(v), { error: `Sort by one of: ${names.join(', ')}` })
        .default(spec.defaultSort),
      order: z.enum(SORT_ORDERS, { error: 'Order is asc or desc' }).default('asc'),
      ...(filterShape as z.ZodRawShape),
    })
    .transform((raw) => {
      const v = raw as { page: number; pageSize: number; q?: string; sort: string; order: ListInput['order'] } & Record<string, unknown>;
      const filter = Object.fromEntries(filterKeys.map((k) => [k, v[k]])) as z.infer<z.ZodObject<F>>;
      const out: ListInput<S, z.infer<z.ZodObject<F>>> = { page: v.page, pageSize: v.pageSize, q: v.q === '' ? undefined : v.q, sort: v.sort as S, order: v.order, filter };
      return out;
    });
  return { ...spec, query: schema as unknown as ListDefinition<M, S, F>['query'] };
}

/** Parses a query string (e.g. `req.query`) for a list; a bad value is a 400 validation problem naming the parameter. */
export function parseListQuery<S extends string, Filter>(def: { query: z.ZodType<ListInput<S, Filter>> }, query: unknown): ListInput<S, Filter> {
  const r = def.query.safeParse(query ?? {});
  if (!r.success) throw problems.validation(r.error, 'query string');
  return r.data;
}

/** Scope for rows that carry the tenant in `attribute` (default `customerId`; `$box.customer_id$` through a join). */
export function scopeByCustomer<M extends Model>(attribute = 'customerId'): (actor: SessionUser) => WhereOptions<M> {
  return (actor) => {
    const id = scopedCustomerId(actor);
    return (id === null ? {} : { [attribute]: id }) as WhereOptions<M>;
  };
}

/** Scope for admin-only lists whose rows belong to no tenant (the route's role guard is the limit). */
export function noScope<M extends Model>(): WhereOptions<M> {
  return {};
}

/** The Sequelize `order` for a parsed sort: the whitelisted column, then the id in the same direction. */
export function orderOf(sorts: Record<string, SortPath>, sort: string, order: ListInput['order']): Order {
  const path = sorts[sort];
  if (!path) throw problems.badRequest(`Unknown sort "${sort}".`);
  const dir = order === 'desc' ? 'DESC' : 'ASC';
  return [[...path, dir] as [string, string] | [string, string, string], ['id', dir]];
}

/** The `where` of a list: tenant scope AND filters AND search. */
export function whereOf<M extends Model, S extends string, F extends z.ZodRawShape>(def: ListSpec<M, S, F>, actor: SessionUser, input: ListInput<S, z.infer<z.ZodObject<F>>>): WhereOptions<M> {
  const parts: WhereOptions<M>[] = [def.scope(actor), ...(def.filterWhere?.(input.filter) ?? [])];
  if (input.q && def.search) parts.push(def.search(contains(input.q)));
  return { [Op.and]: parts } as WhereOptions<M>;
}

/**
 * Runs a list: one page of rows the actor may see, presented by `present` (which may batch its own
 * lookups for the page), with the total of all matching rows.
 */
export async function runList<M extends Model, S extends string, F extends z.ZodRawShape, T>(
  model: ModelStatic<M>,
  def: ListDefinition<M, S, F>,
  actor: SessionUser,
  input: ListInput<S, z.infer<z.ZodObject<F>>>,
  present: (rows: M[]) => T[] | Promise<T[]>,
): Promise<Page<T>> {
  const options: FindAndCountOptions<M> = {
    where: whereOf(def, actor, input),
    order: orderOf(def.sorts, input.sort, input.order),
    limit: input.pageSize,
    offset: (input.page - 1) * input.pageSize,
    distinct: true,
  };
  if (def.include) options.include = def.include;
  const { rows, count } = await model.findAndCountAll(options);
  return { items: await present(rows), total: count, page: input.page, pageSize: input.pageSize };
}
