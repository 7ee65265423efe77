/**
 * Where the `slow-chemistry` warning (docs/model.md §8) surfaces: analyze's warnings (and `brink analyze
 * --format text`), the planner's analysis at the margin dose (shown on the plan page and by `brink screen`),
 * and the bench sheet's practical warnings. The figures themselves are checked against the dynamic system
 * with ml-matrix in tests/references/slow-chemistry.test.ts; this file checks that they reach the reader.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { formatText } from '../../server/cli.js';
import { analyze } from '../../server/engine/analyze.js';
import type { App } from '../../server/http/app.js';
import type { Sheet } from '../../server/protocol/sheet.js';
import { parseMixture } from '../../server/schema/mixture.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';

let app: App;
beforeAll(async () => {
  app = await freshApp({ demo: true });
});
afterAll(async () => {
  await app.close();
});

describe('slow-chemistry reaches the reader', () => {
  it('brink analyze --format text lists it for the demo example', () => {
    const mix = parseMixture(JSON.parse(readFileSync(new URL('../../seeds/examples/stationary-janus-clusters.json', import.meta.url), 'utf8')));
    const text = formatText(analyze(mix));
    expect(text).toMatch(/\n {2}- slow-chemistry: h2o2 relaxes only 2\.03 times faster than the pattern grows/);
  });

  it('the plan keeps it on the margin analysis of B07 on the washed base, and the bench sheet lists it among its practical warnings', async () => {
    const { uncertainty: _drop, ...request } = planRequest;
    const plan = (await postPlan(app, { ...request, name: 'slow chemistry surfaces' })).json();
    const b07 = plan.result.candidates.find((c: { species: string }) => c.species === 'ptj-1um-b07');
    const w = (b07.atMargin.warnings as { code: string; message: string; ratio: number }[]).find((x) => x.code === 'slow-chemistry')!;
    expect(w).toBeDefined();
    expect(w.ratio).toBeLessThan(20);
    expect(w.message).toMatch(/^h2o2 relaxes only [\d.]+ times faster than the pattern grows/);
    const s = (await app.inject({ method: 'GET', url: `/api/plans/${plan.id}/sheet?format=json&candidate=ptj-1um-b07` })).json() as Sheet;
    const onSheet = s.warnings.find((x) => x.code === 'slow-chemistry');
    expect(onSheet?.message).toMatch(/h2o2 relaxes only [\d.]+ times faster than the pattern grows/);
    const md = (await app.inject({ method: 'GET', url: `/api/plans/${plan.id}/sheet?format=md&candidate=ptj-1um-b07` })).body;
    expect(md).toMatch(/slow-chemistry: h2o2 relaxes only/);
  });
});
