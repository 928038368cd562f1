/** Every migration, in order. Add new files here (a static list works under tsx, Vitest and compiled JS alike). */
import * as m0001 from './0001-core';
import * as m0002 from './0002-telemetry';
import * as m0005 from './0005-alarms';
import * as m0006 from './0006-push';
import * as m0007 from './0007-rule-overrides';
import * as m0008 from './0008-reading-quality';

export const MIGRATIONS = [
  { name: '0001-core', ...m0001 },
  { name: '0002-telemetry', ...m0002 },
  { name: '0005-alarms', ...m0005 },
  { name: '0006-push', ...m0006 },
  { name: '0007-rule-overrides', ...m0007 },
  { name: '0008-reading-quality', ...m0008 },
];
