/**
 * The pages' build (web/, Vite) on demand: `ensurePages()` builds dist/web/ when it is missing or
 * any file under web/, or any server/ module the pages bundle, is newer than the last build's stamp
 * (dist/web/.built). `npm start` (through
 * `brink serve`) and the test setup call it, so a fresh clone's `npm install && npm start` serves
 * current pages and an edited page is never served stale. Vite is a development dependency: where
 * it is not installed (an install without dev dependencies), the pages already built are served.
 */
import { existsSync, readdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { PACKAGE_ROOT, packagePath } from './version.js';

export const WEB_SRC = packagePath('web');
export const WEB_OUT = packagePath('dist/web');
const STAMP = join(WEB_OUT, '.built');

/** The newest modification time (ms) of the files under dir. */
function newest(dir: string): number {
  let best = -Infinity;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    best = Math.max(best, e.isDirectory() ? newest(p) : statSync(p).mtimeMs);
  }
  return best;
}

/** The relative imports of a TypeScript file, resolved to .ts paths. */
function relativeImports(file: string): string[] {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch {
    return [];
  }
  const out: string[] = [];
  for (const m of text.matchAll(/(?:from|import)\s*\(?\s*'(\.{1,2}\/[^']+)'/g)) out.push(resolve(dirname(file), m[1]!.replace(/\.js$/, '.ts')));
  return out;
}

/**
 * The files outside web/ that the pages bundle: every server/ module a page imports (display units,
 * the fit models the Calibrate page draws its curves with), and theirs in turn.
 */
export function bundledOutsideWeb(): string[] {
  const seen = new Set<string>();
  const queue: string[] = [];
  const walk = (dir: string) => {
    for (const e of readdirSync(dir, { withFileTypes: true })) {
      const p = join(dir, e.name);
      if (e.isDirectory()) walk(p);
      else if (e.name.endsWith('.ts')) queue.push(...relativeImports(p).filter((f) => !f.startsWith(WEB_SRC)));
    }
  };
  walk(join(WEB_SRC, 'src'));
  while (queue.length) {
    const f = queue.pop()!;
    if (seen.has(f) || !existsSync(f)) continue;
    seen.add(f);
    queue.push(...relativeImports(f));
  }
  return [...seen].sort();
}

/** Why the pages need building, or null when dist/web/ is current. */
export function pagesStale(): string | null {
  if (!existsSync(STAMP)) return 'dist/web/ has not been built';
  const built = statSync(STAMP).mtimeMs;
  if (newest(WEB_SRC) > built) return 'a file under web/ is newer than dist/web/';
  const outside = bundledOutsideWeb().find((f) => statSync(f).mtimeMs > built);
  return outside ? `${outside.slice(PACKAGE_ROOT.length + 1)}, which the pages bundle, is newer than dist/web/` : null;
}

/** Build the pages with Vite (web/vite.config.ts) into dist/web/. */
export async function buildPages(): Promise<void> {
  const vite = await import('vite');
  // root and output named here too: always this package's web/ and dist/web/, wherever the config file resolves
  await vite.build({ configFile: join(WEB_SRC, 'vite.config.ts'), root: WEB_SRC, logLevel: 'warn', build: { outDir: WEB_OUT, emptyOutDir: true } });
  writeFileSync(STAMP, `${new Date().toISOString()}\n`);
}

/**
 * Build the pages when they are stale. Returns what was done, for the log. Without Vite installed,
 * keeps what is built (or says the pages are missing) rather than failing the service.
 */
export async function ensurePages(log: (line: string) => void = () => undefined): Promise<'current' | 'built' | 'unavailable'> {
  const why = pagesStale();
  if (why === null) return 'current';
  try {
    await import('vite');
  } catch {
    log(`pages: ${why}, and Vite is not installed (npm install without --omit=dev builds them)`);
    return 'unavailable';
  }
  log(`pages: ${why}; building them (Vite)…`);
  const t0 = Date.now();
  await buildPages();
  log(`pages: built in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
  return 'built';
}

// `npm run build:web` (tsx server/web-build.ts): build the pages now, stale or not.
if (process.argv[1] && import.meta.url === (await import('node:url')).pathToFileURL(process.argv[1]).href) {
  await buildPages();
  process.stdout.write(`pages built into ${WEB_OUT}\n`);
}
