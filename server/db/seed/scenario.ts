// The invented demo scenario of PRODUCT.md: Fernhollow Energy Co-op in the fictional Aldmere Vale.
// Every name, place, serial and number here is invented.
import type { Role } from '../../../schemas/auth';

export const demoPeople: { name: string; role: Role }[] = [
  { name: 'Morgan', role: 'admin' },
  { name: 'Priya', role: 'release_engineer' },
  { name: 'Tomasz', role: 'integrator' },
  { name: 'Ade', role: 'integrator' },
  { name: 'Lena', role: 'support' },
];

export const demoEmail = (name: string) => `${name.toLowerCase()}@fernhollow.example`;

export const demoModel = {
  name: 'FL-2 field logger',
  boards: [
    { label: 'A', note: 'Original board' },
    { label: 'B', note: 'Bulk capacitors on the supply: fewer brown-out resets' },
    { label: 'C', note: 'Switching regulator' },
  ],
  minUpdateSupplyV: 4.6,
  checkInIntervalS: 900,
  busVMax: 36,
  shuntFullScaleV: 0.08192,
  tempResolutions: [9, 10, 11, 12],
};

export type DemoSite = { name: string; customer: string; address: string; latitude: number; longitude: number; integrator: string };

// Aldmere Vale is invented; its coordinates sit in open farmland at about 52° N.
export const demoSites: DemoSite[] = [
  { name: 'Aldmere Village Hall', customer: 'Aldmere Parish Council', address: '1 Green Lane, Aldmere', latitude: 52.1412, longitude: -1.9821, integrator: 'Tomasz' },
  { name: 'Brackenford Pump House', customer: 'Vale Irrigation Group', address: 'Mill Race, Brackenford', latitude: 52.1288, longitude: -1.9534, integrator: 'Ade' },
  { name: 'Aldmere Primary School', customer: 'Aldmere Primary School', address: 'School Road, Aldmere', latitude: 52.1431, longitude: -1.9777, integrator: 'Tomasz' },
  { name: 'Hollins Dairy', customer: 'Hollins Dairy Farm', address: 'Hollins Lane, Westby', latitude: 52.1567, longitude: -2.0113, integrator: 'Ade' },
  { name: 'Westby Telecom Hut 3', customer: 'Vale Link Networks', address: 'Ridge Channel, Westby', latitude: 52.1702, longitude: -2.0251, integrator: 'Tomasz' },
  { name: 'Aldwater Boat Club', customer: 'Aldwater Boat Club', address: 'Lakeside, Aldwater', latitude: 52.1193, longitude: -1.9402, integrator: 'Ade' },
];

// ─── The full scenario: 60 sites in Aldmere Vale ────────────────────────────
// Invented villages, each with a centre about 52.1° N, 2.0° W; the Vale spans some 20 km. Sites sit
// within a kilometre or so of their village's centre. Tomasz looks after the north of the Vale, Ade the south.

export type Village = { name: string; latitude: number; longitude: number };

export const valeVillages: Record<string, Village> = {
  aldmere: { name: 'Aldmere', latitude: 52.1412, longitude: -1.9821 },
  brackenford: { name: 'Brackenford', latitude: 52.1288, longitude: -1.9534 },
  westby: { name: 'Westby', latitude: 52.1640, longitude: -2.0200 },
  aldwater: { name: 'Aldwater', latitude: 52.1193, longitude: -1.9402 },
  tarnwick: { name: 'Tarnwick', latitude: 52.0950, longitude: -2.0500 },
  sallowmere: { name: 'Sallowmere', latitude: 52.0700, longitude: -1.9850 },
  corvenham: { name: 'Corvenham', latitude: 52.1800, longitude: -1.9300 },
  hobbleford: { name: 'Hobbleford', latitude: 52.1050, longitude: -1.8900 },
  dunnock: { name: 'Dunnock Green', latitude: 52.1550, longitude: -2.0800 },
  quenby: { name: 'Quenby Marsh', latitude: 52.0600, longitude: -2.0600 },
  pellow: { name: 'Pellow Cross', latitude: 52.1850, longitude: -2.0000 },
  sedgebury: { name: 'Sedgebury', latitude: 52.0850, longitude: -1.9200 },
};

/**
 * One site of the full scenario, in the order the co-op equipped them (oldest first): the oldest
 * carry the original board A, the middle ones board B, the newest board C. `loggers` is how many
 * field loggers watch its panels.
 */
export type ValeSite = {
  name: string;
  customer: string;
  address: string;
  village: keyof typeof valeVillages;
  loggers: number;
  /** Exact coordinates for the six sites of the small scenario; the others are placed near their village. */
  latitude?: number;
  longitude?: number;
};

export const valeSites: ValeSite[] = [
  { name: 'Aldmere Village Hall', customer: 'Aldmere Parish Council', address: '1 Green Lane, Aldmere', village: 'aldmere', loggers: 4, latitude: 52.1412, longitude: -1.9821 },
  { name: 'Brackenford Pump House', customer: 'Vale Irrigation Group', address: 'Mill Race, Brackenford', village: 'brackenford', loggers: 5, latitude: 52.1288, longitude: -1.9534 },
  { name: 'Aldmere Primary School', customer: 'Aldmere Primary School', address: 'School Road, Aldmere', village: 'aldmere', loggers: 8, latitude: 52.1431, longitude: -1.9777 },
  { name: 'Hollins Dairy', customer: 'Hollins Dairy Farm', address: 'Hollins Lane, Westby', village: 'westby', loggers: 7, latitude: 52.1567, longitude: -2.0113 },
  { name: 'Westby Telecom Hut 3', customer: 'Vale Link Networks', address: 'Ridge Channel, Westby', village: 'westby', loggers: 3, latitude: 52.1702, longitude: -2.0251 },
  { name: 'Aldwater Boat Club', customer: 'Aldwater Boat Club', address: 'Lakeside, Aldwater', village: 'aldwater', loggers: 4, latitude: 52.1193, longitude: -1.9402 },
  { name: 'Brackenford Village Hall', customer: 'Brackenford Parish Council', address: 'Church Street, Brackenford', village: 'brackenford', loggers: 3 },
  { name: 'Tarnwick Pump House 1', customer: 'Vale Irrigation Group', address: 'Tarn Lane, Tarnwick', village: 'tarnwick', loggers: 5 },
  { name: 'Corvenham Dairy', customer: 'Corvenham Dairy Partnership', address: 'Top Road, Corvenham', village: 'corvenham', loggers: 7 },
  { name: 'Westby Chapel Rooms', customer: 'Westby Chapel Trust', address: 'Chapel Walk, Westby', village: 'westby', loggers: 2 },
  { name: 'Sallowmere Village Hall', customer: 'Sallowmere Parish Council', address: 'The Square, Sallowmere', village: 'sallowmere', loggers: 3 },
  { name: 'Hobbleford Cricket Pavilion', customer: 'Hobbleford Cricket Club', address: 'Meadow Lane, Hobbleford', village: 'hobbleford', loggers: 3 },
  { name: 'Dunnock Green Telecom Hut 1', customer: 'Vale Link Networks', address: 'Beacon Hill, Dunnock Green', village: 'dunnock', loggers: 2 },
  { name: 'Pellow Cross Community Shop', customer: 'Pellow Cross Community Shop Ltd', address: '4 Cross Street, Pellow Cross', village: 'pellow', loggers: 3 },
  { name: 'Tarnwick Pump House 2', customer: 'Vale Irrigation Group', address: 'Lower Tarn Fields, Tarnwick', village: 'tarnwick', loggers: 5 },
  { name: 'Quenby Marsh "Top Barn"', customer: 'Quenby Marsh Farms', address: 'Marsh Drove, Quenby Marsh', village: 'quenby', loggers: 5 },
  { name: 'Sedgebury Pump House', customer: 'Vale Irrigation Group', address: 'Sedge Cut, Sedgebury', village: 'sedgebury', loggers: 5 },
  { name: 'Aldmere Surgery', customer: 'Aldmere Vale Health Centre', address: '12 High Street, Aldmere', village: 'aldmere', loggers: 4 },
  { name: 'Corvenham Scout Hut', customer: 'Corvenham Scout Group', address: 'Bramble Way, Corvenham', village: 'corvenham', loggers: 2 },
  { name: 'Westby Library', customer: 'Vale Libraries', address: 'Market Place, Westby', village: 'westby', loggers: 3 },
  { name: 'Fernhollow Depot', customer: 'Fernhollow Energy Co-op', address: 'Unit 3, Vale Works, Brackenford', village: 'brackenford', loggers: 8 },
  { name: 'Hobbleford Dairy', customer: 'Hobbleford Dairy Farm', address: 'Ford Lane, Hobbleford', village: 'hobbleford', loggers: 7 },
  { name: 'Sallowmere Allotments, North Plot', customer: 'Sallowmere Allotment Society', address: 'Allotment Lane, Sallowmere', village: 'sallowmere', loggers: 2 },
  { name: 'Tarnwick Village Hall', customer: 'Tarnwick Village Hall Trust', address: 'Hall Lane, Tarnwick', village: 'tarnwick', loggers: 3 },
  { name: 'Dunnock Green Bowls Club', customer: 'Dunnock Green Bowls Club', address: 'Green End, Dunnock Green', village: 'dunnock', loggers: 3 },
  { name: 'Pellow Cross Pump House', customer: 'Vale Irrigation Group', address: 'Pellow Brook, Pellow Cross', village: 'pellow', loggers: 5 },
  { name: 'Aldwater Sailing Store', customer: 'Aldwater Boat Club', address: 'North Shore, Aldwater', village: 'aldwater', loggers: 3 },
  { name: 'Quenby Marsh Telecom Hut 2', customer: 'Vale Link Networks', address: 'Marsh Bank, Quenby Marsh', village: 'quenby', loggers: 2 },
  { name: 'Sedgebury Church Hall', customer: 'Sedgebury Parochial Church Council', address: 'Church Lane, Sedgebury', village: 'sedgebury', loggers: 3 },
  { name: 'Corvenham Growers Glasshouses', customer: 'Corvenham Growers', address: 'Glasshouse Road, Corvenham', village: 'corvenham', loggers: 9 },
  { name: 'Brackenford Fire Station', customer: 'Vale Fire and Rescue', address: 'Station Road, Brackenford', village: 'brackenford', loggers: 4 },
  { name: 'Westby Pump House', customer: 'Vale Irrigation Group', address: 'Westby Levels, Westby', village: 'westby', loggers: 5 },
  { name: 'Hobbleford Village Hall', customer: 'Hobbleford Parish Council', address: 'The Green, Hobbleford', village: 'hobbleford', loggers: 3 },
  { name: 'Tarnwick Dairy', customer: 'Tarnwick Dairy Co.', address: 'Tarn Farm, Tarnwick', village: 'tarnwick', loggers: 7 },
  { name: 'Dunnock Green Primary Annex', customer: 'Aldmere Primary School', address: 'Annex Road, Dunnock Green', village: 'dunnock', loggers: 4 },
  { name: 'Pellow Cross Telecom Hut 4', customer: 'Vale Link Networks', address: 'Cross Ridge, Pellow Cross', village: 'pellow', loggers: 2 },
  { name: 'Sallowmere Pump House', customer: 'Vale Irrigation Group', address: 'Mere Sluice, Sallowmere', village: 'sallowmere', loggers: 5 },
  { name: 'Aldmere Sports Pavilion', customer: 'Aldmere Parish Council', address: 'Recreation Ground, Aldmere', village: 'aldmere', loggers: 3 },
  { name: 'Quenby Marsh Village Hall', customer: 'Quenby Marsh Parish Meeting', address: 'Marsh Road, Quenby Marsh', village: 'quenby', loggers: 3 },
  { name: 'Sedgebury Dairy', customer: 'Sedgebury Dairy Farm', address: 'Sedge Farm, Sedgebury', village: 'sedgebury', loggers: 7 },
  { name: 'Corvenham Village Hall', customer: 'Corvenham Parish Council', address: 'Hall Road, Corvenham', village: 'corvenham', loggers: 3 },
  { name: 'Westby Telecom Hut 5', customer: 'Vale Link Networks', address: 'Ridge Channel, Westby', village: 'westby', loggers: 2 },
  { name: 'Hobbleford Pump House', customer: 'Vale Irrigation Group', address: 'Hobble Brook, Hobbleford', village: 'hobbleford', loggers: 5 },
  { name: 'Aldwater Boathouse Café', customer: 'Aldwater Lakeside Café', address: 'South Shore, Aldwater', village: 'aldwater', loggers: 3 },
  { name: 'Tarnwick Telecom Hut 6', customer: 'Vale Link Networks', address: 'Tarn Ridge, Tarnwick', village: 'tarnwick', loggers: 2 },
  { name: 'Dunnock Green Pump House', customer: 'Vale Irrigation Group', address: 'Dunnock Leat, Dunnock Green', village: 'dunnock', loggers: 5 },
  { name: 'Pellow Cross Village Hall', customer: 'Pellow Cross Parish Council', address: 'Hall Street, Pellow Cross', village: 'pellow', loggers: 3 },
  { name: 'Sallowmere Dairy', customer: 'Sallowmere Dairy Farm', address: 'Mere Farm, Sallowmere', village: 'sallowmere', loggers: 6 },
  { name: 'Brackenford Allotments', customer: 'Brackenford Allotment Society', address: 'Ford Meadow, Brackenford', village: 'brackenford', loggers: 2 },
  { name: 'Quenby Marsh Pump House', customer: 'Vale Irrigation Group', address: 'Marsh Sluice, Quenby Marsh', village: 'quenby', loggers: 4 },
  { name: 'Sedgebury Scout Hut', customer: 'Sedgebury Scout Group', address: 'Scout Lane, Sedgebury', village: 'sedgebury', loggers: 2 },
  { name: 'Corvenham Pump House', customer: 'Vale Irrigation Group', address: 'Corven Brook, Corvenham', village: 'corvenham', loggers: 4 },
  { name: 'Aldmere Community Orchard Barn', customer: 'Aldmere Orchard Group', address: 'Orchard Lane, Aldmere', village: 'aldmere', loggers: 2 },
  { name: 'Westby Cricket Pavilion', customer: 'Westby Cricket Club', address: 'Long Field, Westby', village: 'westby', loggers: 3 },
  { name: 'Hobbleford Telecom Hut 7', customer: 'Vale Link Networks', address: 'Hobble Ridge, Hobbleford', village: 'hobbleford', loggers: 2 },
  { name: 'Tarnwick Church Hall', customer: 'Tarnwick Parochial Church Council', address: 'Church Row, Tarnwick', village: 'tarnwick', loggers: 3 },
  { name: 'Dunnock Green Dairy', customer: 'Dunnock Dairy Partnership', address: 'Green Farm, Dunnock Green', village: 'dunnock', loggers: 6 },
  { name: 'Pellow Cross Sports Club', customer: 'Pellow Cross Sports Association', address: 'Cross Fields, Pellow Cross', village: 'pellow', loggers: 3 },
  { name: 'Sallowmere Boat Sheds', customer: 'Sallowmere Rowing Club', address: 'Mere Edge, Sallowmere', village: 'sallowmere', loggers: 3 },
  { name: 'Quenby Marsh Dairy', customer: 'Quenby Marsh Farms', address: 'Lower Marsh Farm, Quenby Marsh', village: 'quenby', loggers: 6 },
];

/** Integrator of a village's sites: Tomasz in the north of the Vale, Ade in the south. */
export function integratorOf(village: Village): 'Tomasz' | 'Ade' {
  return village.latitude >= 52.125 ? 'Tomasz' : 'Ade';
}
