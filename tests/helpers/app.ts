/** A fresh app over a fresh in-memory database (optionally with the demo shelf). */
import type { AccessConfig } from '../../server/http/access.js';
import { buildApp } from '../../server/http/app.js';
import { seedDemoShelf } from '../../server/shelf/seed.js';
import { openDatabase } from '../../server/store/db.js';

export async function freshApp(options: { demo?: boolean; access?: AccessConfig } = {}) {
  const db = openDatabase(':memory:');
  if (options.demo) seedDemoShelf(db);
  const app = await buildApp({ config: { closeDatabase: true, ...(options.access ? { access: options.access } : {}) }, db });
  return app;
}

export const chemicalRecord = (id = 'fuel', diffusivity: unknown = '1.4e-9 m^2/s') => ({
  id,
  name: `chemical ${id}`,
  diffusivity,
  lossRate: '0 1/s',
});

export const speciesRecord = (id = 'bead', extra: Record<string, unknown> = {}) => ({
  id,
  name: `species ${id}`,
  kind: 'colloid',
  diffusivity: { value: '0.22 um^2/s', sd: '0.02 um^2/s', provenance: { source: 'measured', reference: 'MSD fit, notebook 12 p. 4 (invented)', date: '2026-11-02', by: 'a student (invented)' } },
  radius: '1 um',
  materialDensity: '2 g/mL',
  couplings: [{ chemical: 'fuel', activity: '-2e-16 mol/s', mobility: '50 um^2/(s*mM)' }],
  ...extra,
});
