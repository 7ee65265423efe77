/** server/engine/ is pure numerics: it imports nothing of the server (product.md, layout). */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';

const engineDir = new URL('../../server/engine/', import.meta.url).pathname;

function files(dir: string): string[] {
  return readdirSync(dir).flatMap((f) => {
    const p = join(dir, f);
    return statSync(p).isDirectory() ? files(p) : p.endsWith('.ts') ? [p] : [];
  });
}

describe('engine purity', () => {
  it('imports only itself (no fastify, better-sqlite3, zod, mathjs or other server folders)', () => {
    const all = files(engineDir);
    expect(all.length).toBeGreaterThan(5);
    for (const f of all) {
      const src = readFileSync(f, 'utf8');
      for (const m of src.matchAll(/(?:import|export)[^'"]*?from\s+['"]([^'"]+)['"]|import\(\s*['"]([^'"]+)['"]\s*\)/g)) {
        const spec = m[1] ?? m[2]!;
        expect(spec.startsWith('./') || spec.startsWith('../') ? 'relative' : spec, `${f} imports ${spec}`).toBe('relative');
        if (spec.startsWith('../')) {
          const target = join(f, '..', spec);
          expect(target.startsWith(engineDir), `${f} reaches outside the engine: ${spec}`).toBe(true);
        }
      }
    }
  });
});
