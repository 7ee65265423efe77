/**
 * `brink --version` prints package.json's version (the reference: the package
 * file itself), through bin/brink.js and through the command line's own main;
 * and the compiled package runs on its own: the build (tsconfig.build.json) is
 * emitted into a scratch copy of the package that has no TypeScript sources,
 * so bin/brink.js can only run dist/, and that copy analyses an example, seeds
 * a database (migrations/ and seeds/ found from dist/), serves its pages
 * (web/) on 127.0.0.1 and runs a plan as a job in its worker threads
 * (dist/server/jobs/worker.js). No timings here: `npm run bench` and DEVELOPERS.md
 * report how fast it starts.
 */
import { spawn, spawnSync } from 'node:child_process';
import { copyFileSync, cpSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, symlinkSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';
import { PACKAGE_ROOT, VERSION } from '../../server/version.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';

const root = new URL('../../', import.meta.url).pathname;
const pkg = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')) as { version: string };

describe('brink --version', () => {
  it('package.json has a version to report', () => {
    expect(pkg.version).toMatch(/^\d+\.\d+\.\d+/);
  });

  for (const arg of ['--version', 'version']) {
    it(`bin/brink.js ${arg} prints package.json's version and exits 0`, () => {
      const p = spawnSync(process.execPath, [join(root, 'bin/brink.js'), arg], { encoding: 'utf8' });
      expect(p.status).toBe(0);
      expect(p.stdout).toBe(`${pkg.version}\n`);
      expect(p.stderr).toBe('');
    });

    it(`main([${arg}]) prints the same version`, async () => {
      let out = '';
      const code = await main([arg], { out: (t) => (out += t), err: () => {} });
      expect(code).toBe(0);
      expect(out).toBe(`${pkg.version}\n`);
    });
  }

  it('the service and the sheets report package.json\'s version, from the package root', () => {
    expect(VERSION).toBe(pkg.version);
    expect(join(PACKAGE_ROOT, '/')).toBe(join(root, '/'));
  });
});

describe('the compiled package', () => {
  let copy = '';

  beforeAll(() => {
    copy = mkdtempSync(join(tmpdir(), 'brink-dist-'));
    const tsc = spawnSync(process.execPath, [join(root, 'node_modules/typescript/bin/tsc'), '-p', join(root, 'tsconfig.build.json'), '--outDir', join(copy, 'dist')], { encoding: 'utf8' });
    // tsc exits 2 when it emitted in spite of type errors: those are `npm run typecheck`'s to report (and
    // `npm run build` fails on them); this test is about the emitted package running, so 0 or 2 will do.
    if (tsc.status !== 0 && tsc.status !== 2) throw new Error(`the build emitted nothing:\n${tsc.stdout}${tsc.stderr}`);
    mkdirSync(join(copy, 'bin'));
    copyFileSync(join(root, 'bin/brink.js'), join(copy, 'bin/brink.js'));
    copyFileSync(join(root, 'package.json'), join(copy, 'package.json'));
    for (const d of ['migrations', 'seeds', 'web', 'node_modules']) symlinkSync(join(root, d), join(copy, d), 'dir');
    // the pages as built (the test setup built them): a package carries dist/web/ beside dist/server/
    cpSync(join(root, 'dist/web'), join(copy, 'dist/web'), { recursive: true });
  }, 120_000);

  afterAll(() => {
    if (copy) rmSync(copy, { recursive: true, force: true });
  });

  const brink = (args: string[]) => spawnSync(process.execPath, [join(copy, 'bin/brink.js'), ...args], { encoding: 'utf8', env: { ...process.env, BRINK_DEBUG: '1' } });

  it('has no TypeScript sources, only dist/, which bin/brink.js runs', () => {
    expect(existsSync(join(copy, 'server'))).toBe(false);
    expect(existsSync(join(copy, 'dist/server/cli.js'))).toBe(true);
    const p = brink(['help']);
    expect(p.status).toBe(0);
    expect(p.stderr).toContain('running dist/server/cli.js');
    expect(p.stdout).toContain('brink --version');
  });

  it('analyses an example to the same JSON as the sources', async () => {
    const file = join(root, 'seeds/examples/stable-janus-dispersed.json');
    const p = brink(['analyze', file]);
    expect(p.status).toBe(0);
    let fromSources = '';
    await main(['analyze', file], { out: (t) => (fromSources += t), err: () => {} });
    expect(JSON.parse(p.stdout)).toEqual(JSON.parse(fromSources));
  });

  it('seeds a new database: migrations/ and seeds/ are found from dist/', () => {
    const db = join(copy, 'seeded.sqlite');
    const p = brink(['seed', '--db', db]);
    expect(p.status, p.stderr).toBe(0);
    expect(existsSync(db)).toBe(true);
  });

  it('serves its pages (web/), reports the version and runs a plan job in its workers, on 127.0.0.1', async () => {
    const p = spawn(process.execPath, [join(copy, 'bin/brink.js'), 'serve', '--db', join(copy, 'served.sqlite'), '--port', '0', '--host', '127.0.0.1'], { stdio: ['ignore', 'pipe', 'pipe'] });
    try {
      const url = await new Promise<string>((resolve, reject) => {
        let out = '';
        const timer = setTimeout(() => reject(new Error(`no URL printed: ${out}`)), 30_000);
        const onData = (d: Buffer) => {
          out += d.toString();
          const m = /serving the shelf at (http:\/\/127\.0\.0\.1:\d+\/)/.exec(out);
          if (m) {
            clearTimeout(timer);
            resolve(m[1]!);
          }
        };
        p.stdout.on('data', onData);
        p.stderr.on('data', onData);
        p.once('exit', (code) => reject(new Error(`exited ${code}: ${out}`)));
      });
      const page = await fetch(url);
      expect(page.status).toBe(200);
      expect(await page.text()).toBe(readFileSync(join(copy, 'dist/web/index.html'), 'utf8'));
      const health = (await (await fetch(`${url}api/health`)).json()) as { version: string; species: number };
      expect(health.version).toBe(pkg.version);
      expect(health.species).toBeGreaterThan(0);

      // a plan runs as a job in the worker threads, which load dist/server/jobs/worker.js: the same answer as the
      // sources give in process (the reference here is the TypeScript path of the same request)
      const posted = await fetch(`${url}api/plans`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(planRequest) });
      expect(posted.status).toBe(202);
      let job = (await posted.json()) as { id: string; state: string; result?: { planId: number }; error?: unknown };
      for (let i = 0; !['done', 'failed', 'cancelled', 'timed-out'].includes(job.state); i++) {
        if (i > 600) throw new Error('the job did not end within 60 s');
        await new Promise((r) => setTimeout(r, 100));
        job = (await (await fetch(`${url}api/jobs/${job.id}`)).json()) as typeof job;
      }
      expect(job.state, JSON.stringify(job.error)).toBe('done');
      const plan = (await (await fetch(`${url}api/plans/${job.result!.planId}`)).json()) as { result: { candidates: { species: string; threshold: unknown; band: unknown }[] } };
      const app = await freshApp({ demo: true });
      try {
        const fromSources = (await postPlan(app, planRequest)).json() as typeof plan;
        const pick = (p: typeof plan) => p.result.candidates.map((c) => ({ species: c.species, threshold: c.threshold, band: c.band }));
        expect(pick(plan)).toEqual(pick(fromSources));
        expect(plan.result.candidates.length).toBe(planRequest.candidates.length);
      } finally {
        await app.close();
      }
    } finally {
      const exited = new Promise((res) => p.once('exit', res));
      p.kill('SIGTERM');
      await exited;
    }
  });
});
