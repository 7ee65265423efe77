/**
 * Browser tests: the demo app listening on 127.0.0.1 only, and Debian's Chromium driven by playwright-core
 * with the project's launch flags (no downloaded browser, no network beyond the local service).
 */
import { existsSync } from 'node:fs';
import { chromium, type Browser } from 'playwright-core';
import type { AccessConfig } from '../../server/http/access.js';
import type { App } from '../../server/http/app.js';
import { freshApp } from './app.js';

export const CHROMIUM = '/usr/bin/chromium';

export async function startBrowserApp(access?: AccessConfig): Promise<{ app: App; browser: Browser; base: string }> {
  if (!existsSync(CHROMIUM)) throw new Error(`${CHROMIUM} is missing: install Debian's chromium (apt-get install -y chromium), as .ci/run does`);
  const app = await freshApp({ demo: true, ...(access ? { access } : {}) });
  await app.listen({ port: 0, host: '127.0.0.1' });
  const addr = app.server.address();
  const base = `http://127.0.0.1:${typeof addr === 'object' && addr ? addr.port : 0}`;
  const browser = await chromium.launch({
    executablePath: CHROMIUM,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'],
  });
  return { app, browser, base };
}
