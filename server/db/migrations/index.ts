/** Every migration, in order. Add new files here (a static list works under tsx, Vitest and compiled JS alike). */
import * as m0001 from './0001-core';
import * as m0002 from './0002-telemetry';
import * as m0005 from './0005-alarms';
import * as m0006 from './0006-push';
import * as m0007 from './0007-rule-overrides';
import * as m0008 from './0008-reading-quality';
import * as m0009 from './0009-visits-refrigerant-log';
import * as m0010 from './0010-food-log';
import * as m0011 from './0011-weekly-reports';
import * as m0012 from './0012-condenser-air';

export const MIGRATIONS = [
  { name: '0001-core', ...m0001 },
  { name: '0002-telemetry', ...m0002 },
  { name: '0005-alarms', ...m0005 },
  { name: '0006-push', ...m0006 },
  { name: '0007-rule-overrides', ...m0007 },
  { name: '0008-reading-quality', ...m0008 },
  { name: '0009-visits-refrigerant-log', ...m0009 },
  { name: '0010-food-log', ...m0010 },
  { name: '0011-weekly-reports', ...m0011 },
  { name: '0012-condenser-air', ...m0012 },
];
