/** vitest globalSetup: the pages (dist/web/) built when web/ is newer, before any test serves them. */
import { ensurePages } from '../../server/web-build.js';

export default async function setup(): Promise<void> {
  const what = await ensurePages((line) => process.stdout.write(`${line}\n`));
  if (what === 'unavailable') throw new Error('the pages cannot be built: Vite is not installed (npm install)');
}
