/**
 * The pages are rebuilt when what they bundle changes (server/web-build.ts): the server modules a page
 * imports (display units, the fit models the Calibrate page draws its curves with) are watched as well
 * as web/ itself, so `npm start` never serves pages drawing with an old formula.
 */
import { describe, expect, it } from 'vitest';
import { bundledOutsideWeb, pagesStale } from '../../server/web-build.js';
import { PACKAGE_ROOT } from '../../server/version.js';

describe('what the pages bundle from outside web/', () => {
  it('includes the display units and the fit models, and only files that exist under server/', () => {
    const files = bundledOutsideWeb().map((f) => f.slice(PACKAGE_ROOT.length + 1));
    expect(files).toContain('server/units/display.ts');
    expect(files).toContain('server/engine/fit/models.ts');
    for (const f of files) expect(f).toMatch(/^server\/.*\.ts$/);
  });

  it('the pages are current after the test setup built them', () => {
    expect(pagesStale()).toBeNull();
  });
});
