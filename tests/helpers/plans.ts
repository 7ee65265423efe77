/** Plan requests over the demo shelf shared by the sheet tests. */

/** Washed B09 base (stays dispersed), B07 with a stationary threshold and the catalase bead, with a band. */
export const planRequest = {
  name: 'washed B09: what makes it cluster?',
  base: [{ id: 'ptj-1um-b09', volumeFraction: '0.1 percent' }],
  chemicals: { h2o2: '200 mM' },
  chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
  boundary: 'stationary',
  candidates: ['ptj-1um-b07', 'catb-0.22-l04'],
  uncertainty: { samples: 40, seed: 5 },
};
