/** PATCH bodies: keep only the fields the client sent, so schema defaults never overwrite stored values. */

/**
 * The parsed PATCH body restricted to keys present in the raw JSON body. zod's `.partial()` still
 * applies `.default()` values (e.g. `address: null`), which would silently erase stored fields.
 */
export function sentFields<T extends object>(parsed: T, raw: unknown): Partial<T> {
  const sent = raw !== null && typeof raw === 'object' ? Object.keys(raw) : [];
  const out: Partial<T> = {};
  for (const key of Object.keys(parsed) as Array<keyof T>) {
    if (sent.includes(key as string)) out[key] = parsed[key];
  }
  return out;
}

/** The keys of `changes` whose value differs from the stored row (a field re-sent unchanged is no change). */
export function changedKeys<T extends object>(changes: Partial<T>, current: Partial<Record<keyof T, unknown>>): Array<keyof T> {
  return (Object.keys(changes) as Array<keyof T>).filter((k) => changes[k] !== undefined && changes[k] !== current[k]);
}
