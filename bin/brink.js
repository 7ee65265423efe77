#!/usr/bin/env node
// Entry point of the `brink` command.
//
// It runs the compiled JavaScript in dist/ (`npm run build`, which `npm install`
// and `npm ci` run through `prepare`) when dist/server/cli.js is there and no
// TypeScript source under server/ (nor a tsconfig) is newer than it. Otherwise
// it registers tsx and runs server/cli.ts, so a source edited and not rebuilt
// is never run stale; it is only slower to start. `brink --version` is answered
// here, before any of the program loads. BRINK_DEBUG=1 says on stderr which
// entry point runs and why.
import { existsSync, readFileSync, readdirSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = dirname(dirname(fileURLToPath(import.meta.url)));
const args = process.argv.slice(2);
const debug = (text) => {
  if (process.env.BRINK_DEBUG) process.stderr.write(`brink: ${text}\n`);
};

/** The newest modification time (ms) of the TypeScript sources under dir, and the file; -Infinity when none. */
function newestSource(dir, best = { mtime: -Infinity, file: null }) {
  let entries;
  try {
    entries = readdirSync(dir, { withFileTypes: true });
  } catch {
    return best;
  }
  for (const e of entries) {
    const p = join(dir, e.name);
    if (e.isDirectory()) newestSource(p, best);
    else if (e.name.endsWith('.ts')) {
      const t = statSync(p).mtimeMs;
      if (t > best.mtime) Object.assign(best, { mtime: t, file: p });
    }
  }
  return best;
}

/** Which entry point to run: the compiled one unless it is missing or older than a source. */
function entry() {
  const compiled = join(root, 'dist/server/cli.js');
  if (!existsSync(compiled)) return { compiled: false, why: 'dist/server/cli.js is missing (npm run build)' };
  const built = statSync(compiled).mtimeMs;
  const newest = newestSource(join(root, 'server'));
  for (const f of ['tsconfig.json', 'tsconfig.build.json']) {
    const p = join(root, f);
    if (existsSync(p) && statSync(p).mtimeMs > newest.mtime) Object.assign(newest, { mtime: statSync(p).mtimeMs, file: p });
  }
  if (newest.mtime > built) return { compiled: false, why: `${newest.file} is newer than dist/ (npm run build)` };
  return { compiled: true, why: 'dist/ is up to date' };
}

if (args.length === 1 && (args[0] === '--version' || args[0] === 'version')) {
  const { version } = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8'));
  process.stdout.write(`${version}\n`);
} else {
  const t0 = performance.now();
  const chosen = entry();
  debug(`${chosen.compiled ? 'running dist/server/cli.js' : 'running server/cli.ts through tsx'}: ${chosen.why} (checked in ${(performance.now() - t0).toFixed(1)} ms)`);
  let main;
  if (chosen.compiled) {
    ({ main } = await import(pathToFileURL(join(root, 'dist/server/cli.js')).href));
  } else {
    const { register } = await import('tsx/esm/api');
    register();
    ({ main } = await import(pathToFileURL(join(root, 'server/cli.ts')).href));
  }
  process.exitCode = await main(args);
}
