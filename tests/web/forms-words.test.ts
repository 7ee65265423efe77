/**
 * The What forms page's words for the simulation's warnings (web/src/pages/forms-words.ts): every code the
 * engine can emit (read from its source, so a code added there without words fails here) has words, and the
 * words are sentences — a capital first letter, an end stop, no SI numbers or developer terms (those stay in
 * the details, where the engine's own message is shown).
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { GENERIC_WARNING, WARNING_WORDS } from '../../web/src/pages/forms-words.js';

const dir = 'server/engine/simulate';
const engineCodes = new Set(
  readdirSync(dir)
    .filter((f) => f.endsWith('.ts'))
    .flatMap((f) => [...readFileSync(join(dir, f), 'utf8').matchAll(/code: '([a-z0-9-]+)'/g)].map((m) => m[1]!)),
);

describe('the words for the simulation warnings', () => {
  it('the engine source names its warning codes (the scan below reads something)', () => {
    expect(engineCodes.size).toBeGreaterThan(10);
    expect(engineCodes).toContain('step-limit');
  });

  it('every code the engine emits has words, and so do the codes being added (settles-first, gas-first, …)', () => {
    const missing = [...engineCodes, 'settles-first', 'gas-first', 'clusters-at-particle-size', 'measured-contradicts-linear'].filter((c) => !WARNING_WORDS[c]);
    expect(missing).toEqual([]);
  });

  it('the words are sentences without SI numbers or developer terms, and no two are the same', () => {
    const all = [...Object.values(WARNING_WORDS), GENERIC_WARNING];
    for (const w of all) {
      expect(w, w).toMatch(/^[A-Z]/);
      expect(w, w).toMatch(/[.]$/);
      expect(w, w).not.toMatch(/\d(\.\d+)?e[+-]?\d|`|analyze\(|§| m\b| s\b|1\/s/);
    }
    expect(new Set(all).size).toBe(all.length);
  });
});
