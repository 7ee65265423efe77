/**
 * Two `brink serve` processes on one database file, many clients editing the same species at once
 * with the same base revision: every answer is 200 or 409, never a 500, and exactly one edit wins
 * per base revision (the others are told stale-revision with the winner as current). Each race is
 * a fresh round on the species' current revision; several species race at the same time.
 *
 * Prints: races, answers by status and error, winners per race.
 */
import Database from 'better-sqlite3';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { call, markedSpecies, startServer } from '../helpers/serve.js';

const SPECIES = 4;
const ROUNDS = 50; // per species: SPECIES × ROUNDS races
const CLIENTS = 8; // concurrent edits per race, half to each process

describe('two processes on one file racing edits', () => {
  it(`answer only 200 or 409, with exactly one winner per base revision (${SPECIES * ROUNDS} races)`, async () => {
    const dir = mkdtempSync(join(tmpdir(), 'brink-race-'));
    const dbPath = join(dir, 'brink.sqlite');
    const a = await startServer(dbPath);
    const b = await startServer(dbPath);
    const t0 = Date.now();
    try {
      const ids = Array.from({ length: SPECIES }, (_, i) => `race-${i}`);
      for (const id of ids) expect((await call(`${a.url}api/species`, 'POST', { record: markedSpecies(id, `${id} start`) })).status).toBe(201);
      const answers = new Map<string, number>();
      const winners = new Map<number, number>(); // winners in a race → how many races
      const odd: string[] = [];
      const race = async (id: string) => {
        for (let round = 0; round < ROUNDS; round++) {
          const cur = await call(`${(round % 2 ? a : b).url}api/species/${id}`, 'GET');
          expect(cur.status).toBe(200);
          const base = (cur.json as { revision: number }).revision;
          const results = await Promise.all(
            Array.from({ length: CLIENTS }, (_, c) =>
              call(`${(c % 2 ? a : b).url}api/species/${id}`, 'PUT', { baseRevision: base, record: markedSpecies(id, `${id} round ${round} client ${c}`) }),
            ),
          );
          let won = 0;
          for (const r of results) {
            const key = r.status === 409 ? `409 ${String(r.json.error)}` : String(r.status);
            answers.set(key, (answers.get(key) ?? 0) + 1);
            if (r.status === 200) {
              won++;
              expect((r.json as { revision: number }).revision).toBe(base + 1);
            } else if (r.status === 409 && r.json.error === 'stale-revision') {
              expect((r.json.current as { revision: number }).revision).toBeGreaterThan(base);
            } else odd.push(`${r.status} ${JSON.stringify(r.json).slice(0, 300)}`);
          }
          winners.set(won, (winners.get(won) ?? 0) + 1);
        }
      };
      await Promise.all(ids.map(race));
      const seconds = (Date.now() - t0) / 1000;
      // the file agrees: one new revision per race, numbered without gaps
      const db = new Database(dbPath, { readonly: true });
      for (const id of ids) {
        const revs = (db.prepare("SELECT r.revision FROM shelf_revisions r JOIN shelf_items i ON i.id = r.item_id WHERE i.type = 'species' AND i.key = ? ORDER BY r.revision").all(id) as { revision: number }[]).map((r) => r.revision);
        expect(revs).toEqual(Array.from({ length: ROUNDS + 1 }, (_, i) => i + 1));
      }
      db.close();
      const shown = [...answers.entries()].sort().map(([k, n]) => `${k}: ${n}`).join(', ');
      const w = [...winners.entries()].sort().map(([k, n]) => `${n} races with ${k} winner${k === 1 ? '' : 's'}`).join(', ');
      process.stdout.write(`race figures: 2 processes, ${SPECIES * ROUNDS} races of ${CLIENTS} concurrent edits on one base revision; answers ${shown}; ${w}; ${seconds.toFixed(1)} s\n`);
      expect(odd).toEqual([]);
      expect([...answers.keys()].every((k) => k === '200' || k.startsWith('409'))).toBe(true);
      expect(winners).toEqual(new Map([[1, SPECIES * ROUNDS]]));
    } finally {
      await Promise.all([a.stop(), b.stop()]);
    }
  }, 300_000);
});
