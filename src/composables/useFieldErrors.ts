/** Field-level errors from zod (client) and problem+json (server), keyed by dotted path. */
import { reactive } from 'vue';
import type { ZodError } from 'zod';
import { ApiError } from '@/api/http';

export type FieldErrors = Record<string, string | undefined>;

export function zodFieldErrors(err: ZodError): Record<string, string> {
  const out: Record<string, string> = {};
  for (const issue of err.issues) {
    const key = issue.path.map(String).join('.') || '_form';
    if (!(key in out)) out[key] = issue.message;
  }
  return out;
}

export function useFieldErrors() {
  const errors = reactive<FieldErrors>({});
  function clear() {
    for (const k of Object.keys(errors)) delete errors[k];
  }
  function set(map: Record<string, string>) {
    clear();
    Object.assign(errors, map);
  }
  function fromZod(err: ZodError) {
    set(zodFieldErrors(err));
  }
  /** Copies the server's field errors; true when at least one was mapped. */
  function fromApi(e: unknown): boolean {
    if (!(e instanceof ApiError)) return false;
    const map: Record<string, string> = {};
    for (const [k, msgs] of Object.entries(e.fieldErrors)) {
      const key = k.replace(/^body\./, '').replace(/\[(\d+)\]/g, '.$1').replace(/^\//, '').replace(/\//g, '.');
      if (msgs[0]) map[key] = msgs[0];
    }
    set(map);
    return Object.keys(map).length > 0;
  }
  /** Props for an NFormItem. */
  function item(path: string) {
    const msg = errors[path];
    return msg ? { validationStatus: 'error' as const, feedback: msg } : { validationStatus: undefined, feedback: undefined };
  }
  return { errors, clear, set, fromZod, fromApi, item };
}
