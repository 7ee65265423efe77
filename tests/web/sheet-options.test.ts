/**
 * The sheet's options as the Sheet and Outcomes pages carry them (web/src/pages/sheet-options.ts): the page
 * address, the API's GET query and the POST body hold the same options, so the Outcomes page rebuilds exactly
 * the sheet (and tube codes) the Sheet page showed.
 */
import { describe, expect, it } from 'vitest';
import { apiQuery, optionsBody, optionsFromQuery, pageQuery, splitList } from '../../web/src/pages/sheet-options.js';

describe('sheet options on the pages', () => {
  const o = { candidate: 'ptj-1um-b07', sampleVolume: '200 uL', replicates: 2, overage: 0.15, doses: ['0', '1e8 1/mL', '2e8 1/mL'], closedChamber: true, stocks: { h2o2: { molarConcentration: '0.5 mol/L' }, 'ptj-1um-b07': { density: '5e9 1/mL' } } };

  it('round-trips through the page address, stocks included', () => {
    expect(optionsFromQuery(pageQuery(o))).toEqual(o);
  });

  it('the API query carries every option but the stocks; the body carries them all', () => {
    const q = apiQuery(o);
    expect(q.get('doses')).toBe('0,1e8 1/mL,2e8 1/mL');
    expect(q.get('replicates')).toBe('2');
    expect(q.has('stocks')).toBe(false);
    expect(optionsBody(o)).toEqual(o);
    expect(optionsBody({ stocks: {} })).toEqual({});
  });

  it('leaves out what it cannot read instead of guessing', () => {
    expect(optionsFromQuery(new URLSearchParams('replicates=two&overage=&stocks={bad&closedChamber=yes&doses=,,'))).toEqual({});
    expect(optionsFromQuery(new URLSearchParams('stocks={"x":{"volume":"1 mL"}}'))).toEqual({});
    expect(splitList(' 0 , 1e6 1/mL,, 1e7 1/mL ')).toEqual(['0', '1e6 1/mL', '1e7 1/mL']);
  });
});
