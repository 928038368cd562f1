/** Human text for settings-change records (requested / applied), in the user's units. */
import type { useUnits } from '@/composables/useUnits';

type Units = ReturnType<typeof useUnits>;

const LABELS: Record<string, string> = {
  setpointC: 'Setpoint',
  differentialK: 'Differential',
  superheatTargetK: 'Superheat target',
  refrigerant: 'Refrigerant',
  defrostType: 'Defrost type',
  defrostIntervalH: 'Defrost every',
  defrostMaxMin: 'Defrost limit',
  defrostTerminationC: 'Termination',
  dripMin: 'Drip time',
  fanDelayMin: 'Fan delay',
};

function valueText(key: string, v: unknown, u: Units): string {
  if (typeof v === 'number') {
    if (key.endsWith('C')) return u.temp(v);
    if (key.endsWith('K')) return u.delta(v);
    if (key.endsWith('H')) return `${v} h`;
    if (key.endsWith('Min')) return `${v} min`;
    return String(v);
  }
  if (typeof v === 'string') return v;
  return JSON.stringify(v);
}

/** ["Setpoint 35.6 °F", "Drip time 3 min", ...] */
export function settingEntries(rec: Record<string, unknown> | null | undefined, u: Units): string[] {
  if (!rec) return [];
  const out: string[] = [];
  for (const [k, v] of Object.entries(rec)) {
    if (k === 'override') continue;
    if (k === 'defrost' && v && typeof v === 'object') {
      for (const [dk, dv] of Object.entries(v as Record<string, unknown>)) out.push(`${LABELS[dk] ?? dk} ${valueText(dk, dv, u)}`);
      continue;
    }
    out.push(`${LABELS[k] ?? k} ${valueText(k, v, u)}`);
  }
  return out;
}
