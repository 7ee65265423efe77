/**
 * server/engine/ is pure numerics: it imports only itself and, of packages,
 * exactly ml-matrix (the general eigen solver in linalg/eigen.ts; DEVELOPERS.md,
 * "Dependencies and why"). The same rule is a lint rule (eslint.config.js).
 */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';

const engineDir = new URL('../../server/engine/', import.meta.url).pathname;
const ALLOWED_PACKAGES = new Set(['ml-matrix']);

function files(dir: string): string[] {
  return readdirSync(dir).flatMap((f) => {
    const p = join(dir, f);
    return statSync(p).isDirectory() ? files(p) : p.endsWith('.ts') ? [p] : [];
  });
}

/** Every module specifier of an import, re-export or dynamic import in a source text. */
function specifiers(src: string): string[] {
  return [...src.matchAll(/(?:import|export)[^'"]*?from\s+['"]([^'"]+)['"]|import\s*['"]([^'"]+)['"]|import\(\s*['"]([^'"]+)['"]\s*\)/g)].map((m) => m[1] ?? m[2] ?? m[3]!);
}

describe('engine purity', () => {
  it('imports only itself and ml-matrix (no fastify, better-sqlite3, zod, mathjs, node: or other server folders)', () => {
    const all = files(engineDir);
    expect(all.length).toBeGreaterThan(5);
    const packagesSeen = new Set<string>();
    for (const f of all) {
      for (const spec of specifiers(readFileSync(f, 'utf8'))) {
        if (spec.startsWith('./') || spec.startsWith('../')) {
          const target = join(f, '..', spec);
          expect(target.startsWith(engineDir), `${f} reaches outside the engine: ${spec}`).toBe(true);
        } else {
          expect(ALLOWED_PACKAGES.has(spec), `${f} imports ${spec}`).toBe(true);
          packagesSeen.add(spec);
        }
      }
    }
    // The allowance is used (linalg/eigen.ts), so it is not a stale exception.
    expect([...packagesSeen]).toEqual(['ml-matrix']);
  });

  it('the scanner sees every import form (so the check above can fail)', () => {
    const src = "import { a } from 'zod';\nimport 'fastify';\nexport * from '../../x.js';\nconst m = await import('mathjs');";
    expect(specifiers(src)).toEqual(['zod', 'fastify', '../../x.js', 'mathjs']);
  });
});
