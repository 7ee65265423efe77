/**
 * `brink serve` as a child process on a file database, for the tests that need a real process
 * (backup while serving, kill -9 and restart, two processes on one file). 127.0.0.1 only.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { join } from 'node:path';

export const root = new URL('../../', import.meta.url).pathname;
export const bin = join(root, 'bin/brink.js');

export interface Served {
  url: string;
  process: ChildProcess;
  output: () => string;
  /** SIGTERM, and the exit code */
  stop: () => Promise<number | null>;
  /** SIGKILL (no shutdown at all), resolved when the process is gone */
  kill: () => Promise<void>;
}

export function startServer(db: string, env: Record<string, string> = {}): Promise<Served> {
  return new Promise((resolve, reject) => {
    const p = spawn(process.execPath, [bin, 'serve', '--db', db, '--port', '0', '--host', '127.0.0.1'], {
      stdio: ['ignore', 'pipe', 'pipe'],
      env: { ...process.env, BRINK_WORKERS: '1', ...env },
    });
    let out = '';
    let exited = false;
    const gone = new Promise<number | null>((res) => p.once('exit', (code) => ((exited = true), res(code))));
    const timer = setTimeout(() => reject(new Error(`no URL printed: ${out}`)), 60_000);
    const onData = (d: Buffer) => {
      out += d.toString();
      const m = /serving the shelf at (http:\/\/127\.0\.0\.1:\d+\/)/.exec(out);
      if (m) {
        clearTimeout(timer);
        p.stdout!.off('data', onData);
        p.stderr!.off('data', onData);
        p.stdout!.on('data', (x: Buffer) => (out += x.toString()));
        p.stderr!.on('data', (x: Buffer) => (out += x.toString()));
        resolve({
          url: m[1]!,
          process: p,
          output: () => out,
          stop: async () => {
            if (!exited) p.kill('SIGTERM');
            return gone;
          },
          kill: async () => {
            if (!exited) p.kill('SIGKILL');
            await gone;
          },
        });
      }
    };
    p.stdout!.on('data', onData);
    p.stderr!.on('data', onData);
    void gone.then((code) => {
      clearTimeout(timer);
      reject(new Error(`exited ${code}: ${out}`));
    });
  });
}

/** A small seeded generator (mulberry32), so that a run's random moments can be repeated. */
export function seeded(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** A species record that needs only the demo shelf's h2o2; `name` carries a marker to find the write again. */
export const markedSpecies = (id: string, name: string) => ({
  id,
  name,
  kind: 'colloid',
  diffusivity: '0.22 um^2/s',
  radius: '1 um',
  materialDensity: '2 g/mL',
  couplings: [{ chemical: 'h2o2', activity: '-2e-16 mol/s', mobility: '50 um^2/(s*mM)' }],
});

/** JSON over HTTP with a time limit; a network failure (the process was killed) is `{ status: 0 }`. */
export async function call(url: string, method: string, body?: unknown): Promise<{ status: number; json: Record<string, unknown> }> {
  try {
    const r = await fetch(url, {
      method,
      headers: body === undefined ? {} : { 'content-type': 'application/json' },
      body: body === undefined ? undefined : JSON.stringify(body),
      signal: AbortSignal.timeout(20_000),
    });
    const text = await r.text();
    let json: Record<string, unknown> = {};
    try {
      json = JSON.parse(text) as Record<string, unknown>;
    } catch {
      json = { text };
    }
    return { status: r.status, json };
  } catch {
    return { status: 0, json: {} };
  }
}
