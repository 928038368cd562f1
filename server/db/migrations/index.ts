/** Every migration, in order. Add new files here (a static list works under tsx, Vitest and compiled JS alike). */
import * as m0001 from './0001-core';
import * as m0002 from './0002-telemetry';
import * as m0005 from './0005-alarms';

export const MIGRATIONS = [
  { name: '0001-core', ...m0001 },
  { name: '0002-telemetry', ...m0002 },
  { name: '0005-alarms', ...m0005 },
];
