/**
 * Where brink is installed, and its version. The package root is the nearest
 * folder above this module whose package.json is brink's, so the same code
 * finds migrations/, seeds/ and web/ whether it runs from the TypeScript
 * sources (server/) or compiled (dist/server/).
 */
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

function findPackageRoot(): { root: string; version: string } {
  const start = dirname(fileURLToPath(import.meta.url));
  for (let dir = start; ; dir = dirname(dir)) {
    let text: string | null = null;
    try {
      text = readFileSync(join(dir, 'package.json'), 'utf8');
    } catch {
      // no package.json here: look one folder up
    }
    if (text !== null) {
      const pkg = JSON.parse(text) as { name?: unknown; version?: unknown };
      if (pkg.name === 'brink' && typeof pkg.version === 'string') return { root: dir, version: pkg.version };
    }
    if (dirname(dir) === dir) throw new Error(`brink's package.json was not found in any folder above ${start}`);
  }
}

const found = findPackageRoot();

/** The package's root folder (absolute path): the one holding package.json, migrations/, seeds/, web/. */
export const PACKAGE_ROOT = found.root;

/** The brink version reported by the service and the command line: package.json's `version`. */
export const VERSION = found.version;

/** An absolute path inside the package, e.g. `packagePath('migrations')`. */
export const packagePath = (...parts: string[]) => join(PACKAGE_ROOT, ...parts);
