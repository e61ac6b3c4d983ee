import * as m0001 from './0001-foundation'
import * as m0002 from './0002-team'
import * as m0003 from './0003-field'
import * as m0004 from './0004-model-runs'
import * as m0005 from './0005-publications'
import * as m0006 from './0006-imports'
import * as m0010 from './0010-sessions'
import * as m0020 from './0020-utf8mb4-everywhere'
import * as m0040 from './0040-data-version'
import * as m0050 from './0050-round-visit-target'
import * as m0060 from './0060-email-per-organisation'
import * as m0070 from './0070-device-ids-per-enumerator'
import * as m0110 from './0110-audit-search'
import * as m0140 from './0140-visit-not-asked'
import * as m0150 from './0150-personal-data'
import * as m0200 from './0200-field-devices'
import * as m0230 from './0230-sample-lists'
import * as m0240 from './0240-farm-register'

// Listed by hand, in order: the bundled server has no migrations folder to scan at run time.
// Add a new file as NNNN-what-it-does.ts and append it here.
export const MIGRATIONS = [
  { name: '0001-foundation', ...m0001 },
  { name: '0002-team', ...m0002 },
  { name: '0003-field', ...m0003 },
  { name: '0004-model-runs', ...m0004 },
  { name: '0005-publications', ...m0005 },
  { name: '0006-imports', ...m0006 },
  { name: '0010-sessions', ...m0010 },
  { name: '0020-utf8mb4-everywhere', ...m0020 },
  { name: '0040-data-version', ...m0040 },
  { name: '0050-round-visit-target', ...m0050 },
  { name: '0060-email-per-organisation', ...m0060 },
  { name: '0070-device-ids-per-enumerator', ...m0070 },
  { name: '0110-audit-search', ...m0110 },
  { name: '0140-visit-not-asked', ...m0140 },
  { name: '0150-personal-data', ...m0150 },
  { name: '0200-field-devices', ...m0200 },
  { name: '0230-sample-lists', ...m0230 },
  { name: '0240-farm-register', ...m0240 }
]
