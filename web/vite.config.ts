/**
 * The pages' build (Vite): one HTML file per page in web/, each with its TypeScript entry in
 * web/src/pages/, bundled into dist/web/ (hashed files under assets/), which the service serves
 * (server/http/routes/pages.ts). `npm run build` runs it; `npm start` runs it when a source under
 * web/ is newer than the last build (server/web-build.ts).
 */
import { resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { defineConfig } from 'vite';

const here = fileURLToPath(new URL('.', import.meta.url));

/** Every page: its HTML file in web/ (the URL it is served at is in server/http/routes/pages.ts). */
export const PAGES = ['index', 'item', 'calibrate', 'planner', 'plan', 'sheet', 'outcomes', 'forms'] as const;

export default defineConfig({
  root: here,
  base: '/',
  publicDir: resolve(here, 'public'),
  logLevel: 'warn',
  build: {
    outDir: resolve(here, '../dist/web'),
    emptyOutDir: true,
    target: 'es2022',
    sourcemap: true,
    // the pages load their scripts as files (the content security policy allows no inline script)
    assetsInlineLimit: 0,
    modulePreload: { polyfill: false },
    chunkSizeWarningLimit: 1024,
    rolldownOptions: { input: Object.fromEntries(PAGES.map((p) => [p, resolve(here, `${p}.html`)])) },
  },
});
