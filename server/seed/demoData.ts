/** The invented demo scenario: one contractor, three customers, six sites, 24 boxes. Every name is made up. */
import type { BoxCreateBody } from '../../shared/schemas/boxes';
import type { Role } from '../../shared/domain';
import { BOX_DEFAULTS } from '../../shared/boxFields';

export const DEMO_CONTRACTOR = 'Kettle Ridge Refrigeration Co.';

export interface DemoUser {
  email: string;
  name: string;
  role: Role;
  password: string;
  /** Customer name for managers. */
  customer?: string;
}

export const DEMO_USERS: DemoUser[] = [
  { email: 'office@kettleridge.example.com', name: 'Dana Whitcombe', role: 'admin', password: 'demo-office-2026' },
  { email: 'tech@kettleridge.example.com', name: 'Ravi Ostrander', role: 'technician', password: 'demo-tech-2026' },
  { email: 'manager@juniperlane.example.net', name: 'Mireille Castaño', role: 'manager', password: 'demo-manager-2026', customer: 'Juniper Lane Bistro Group' },
];

type BoxSpec = Omit<BoxCreateBody, 'siteId'>;

// The box form's starting values (shared/boxFields.ts) with the demo's own choices on top.
const cooler = (name: string, refrigerant: BoxSpec['refrigerant'], extra: Partial<BoxSpec> = {}): BoxSpec => ({
  ...BOX_DEFAULTS.cooler, // highLimitC 5 °C = 41 °F: FDA Food Code 3-501.16(A)(2) cold holding
  name,
  refrigerant,
  lowLimitC: 0,
  alarmDelayMin: 45,
  superheatTargetK: 3.3, // ~6 °F
  defrostMaxMin: 40,
  defrostTerminationC: 5,
  ...extra,
});

const freezer = (name: string, refrigerant: BoxSpec['refrigerant'], extra: Partial<BoxSpec> = {}): BoxSpec => ({
  ...BOX_DEFAULTS.freezer, // highLimitC −12 °C, about +10 °F: common practice for a freezer high alarm
  name,
  refrigerant,
  alarmDelayMin: 60,
  superheatTargetK: 3,
  defrostMaxMin: 40,
  defrostTerminationC: 10,
  dripMin: 5,
  fanDelayMin: 3,
  ...extra,
});

export interface DemoSite {
  name: string;
  address: string;
  timeZone: string;
  elevationM: number;
  boxes: BoxSpec[];
}

export interface DemoCustomer {
  name: string;
  contactName: string;
  contactEmail: string;
  contactPhone: string;
  sites: DemoSite[];
}

export const DEMO_CUSTOMERS: DemoCustomer[] = [
  {
    name: 'Juniper Lane Bistro Group',
    contactName: 'Mireille Castaño',
    contactEmail: 'ops@juniperlane.example.net',
    contactPhone: '+1 555 0140',
    sites: [
      {
        name: 'Juniper Lane — Riverside Kitchen',
        address: '18 Ferry Row, Riverside',
        timeZone: 'America/Chicago',
        elevationM: 180,
        boxes: [
          cooler('Prep walk-in cooler', 'R-448A'),
          freezer('Walk-in freezer', 'R-448A'),
          cooler('Produce cooler', 'R-513A', { setpointC: 3 }),
          cooler('Line reach-in', 'R-290', { valveType: 'txv', superheatTargetK: 5 }),
        ],
      },
      {
        name: 'Juniper Lane — Old Town Café',
        address: '4 Saddler Court, Old Town',
        timeZone: 'America/Chicago',
        elevationM: 210,
        boxes: [
          cooler('Dairy cooler', 'R-449A'),
          freezer('Ice cream freezer', 'R-449A', { setpointC: -23 }),
          cooler('Beverage cooler', 'R-134a', { setpointC: 3, saturationMethod: 'coil-thermistor' }),
          cooler('Pastry cooler', 'R-454C'),
        ],
      },
    ],
  },
  {
    name: 'Harrow Street Grocers',
    contactName: 'Tobias Wrenfield',
    contactEmail: 'facilities@harrowstreet.example.com',
    contactPhone: '+1 555 0177',
    sites: [
      {
        name: 'Harrow Street — Mesa Heights',
        address: '902 Tableland Ave, Mesa Heights',
        timeZone: 'America/Denver',
        elevationM: 1600,
        boxes: [
          cooler('Meat cooler', 'R-407A', { setpointC: 1 }),
          freezer('Frozen foods walk-in', 'R-407A'),
          cooler('Produce walk-in', 'R-448A', { setpointC: 3 }),
          cooler('Deli cooler', 'R-404A'),
        ],
      },
      {
        name: 'Harrow Street — Lakeshore',
        address: '55 Pier Road, Lakeshore',
        timeZone: 'America/New_York',
        elevationM: 95,
        boxes: [
          cooler('Dairy walk-in', 'R-449A'),
          freezer('Bakery freezer', 'R-404A', { valveType: 'txv', superheatTargetK: 4 }),
          cooler('Floral cooler', 'R-134a', { setpointC: 4, highLimitC: 7, lowLimitC: 1 }),
          // No R-744 box in the demo until the simulator models a CO₂ (transcritical or cascade) system.
          freezer('Seafood freezer', 'R-448A', { setpointC: -22 }),
        ],
      },
    ],
  },
  {
    name: 'Pinecone Corner Markets',
    contactName: 'Akosua Brightwater',
    contactEmail: 'stores@pineconecorner.example.org',
    contactPhone: '+1 555 0192',
    sites: [
      {
        name: 'Pinecone Corner #12 — Route 9',
        address: '12 Route 9, Millbrook',
        timeZone: 'America/New_York',
        elevationM: 60,
        boxes: [
          cooler('Beverage walk-in', 'R-448A', { setpointC: 3 }),
          freezer('Ice and frozen walk-in', 'R-448A'),
          cooler('Sandwich cooler', 'R-513A'),
          cooler('Milk cooler', 'R-454C'),
        ],
      },
      {
        name: 'Pinecone Corner #31 — Valley Road',
        address: '310 Valley Road, Cedar Flats',
        timeZone: 'America/Los_Angeles',
        elevationM: 420,
        boxes: [
          cooler('Beverage walk-in', 'R-455A', { setpointC: 3 }),
          freezer('Frozen walk-in', 'R-455A'),
          cooler('Grab-and-go cooler', 'R-134a', { valveType: 'txv', superheatTargetK: 5 }),
          cooler('Back-room cooler', 'R-407C'),
        ],
      },
    ],
  },
];
