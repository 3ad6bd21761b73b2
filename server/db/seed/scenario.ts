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
  { name: 'Westby Telecom Hut 3', customer: 'Vale Link Networks', address: 'Ridge Track, Westby', latitude: 52.1702, longitude: -2.0251, integrator: 'Tomasz' },
  { name: 'Aldwater Boat Club', customer: 'Aldwater Boat Club', address: 'Lakeside, Aldwater', latitude: 52.1193, longitude: -1.9402, integrator: 'Ade' },
];
