// The Planner page (/planner): a screening request run as a job, its ranked candidates, bench sheets, stored plans.
import { api, authHeaders, row, num } from '/web/common.js';
const $ = (id) => document.getElementById(id);
const perMl = (x) => (x === null || x === undefined ? '—' : num(x * 1e-6));
async function init() {
  const [sp, ch] = await Promise.all([api('/api/species?limit=500'), api('/api/chemicals?limit=500')]);
  $('base').replaceChildren(...sp.items.map((s) => new Option(`${s.id} — ${s.name}`, s.id)));
  $('fuel').replaceChildren(...ch.items.map((c) => new Option(c.id, c.id)));
  if (sp.items.some((s) => s.id === 'ptj-1um-b09')) $('base').value = 'ptj-1um-b09';
  if (ch.items.some((c) => c.id === 'h2o2')) $('fuel').value = 'h2o2';
  await listPlans();
}
async function listPlans() {
  const p = await api('/api/plans?limit=20');
  $('plans').querySelector('tbody').replaceChildren(...p.items.map((x) => row(String(x.id), x.name, x.request.boundary, x.createdAt)));
}
$('plan').addEventListener('submit', async (ev) => {
  ev.preventDefault();
  $('error').textContent = '';
  $('run').disabled = true;
  $('status').textContent = 'computing…';
  const samples = Number($('samples').value);
  const chamber = { walls: $('walls').value, ...( $('walls').value !== 'unbounded' ? { length: $('length').value } : {}), depth: $('depth').value };
  const body = {
    base: [{ id: $('base').value, volumeFraction: $('phi').value }],
    chemicals: { [$('fuel').value]: $('fuelLevel').value },
    chamber, boundary: $('boundary').value, dosing: $('dosing').value,
    ...(samples > 0 ? { uncertainty: { samples, seed: Number($('seed').value) } } : {}),
    ...($('withMap').checked ? { stateMap: { baseSteps: 14, doseSteps: 18 } } : {}),
  };
  try {
    // the plan is computed as a job (202): follow its progress, then read the stored plan
    const job = await api('/api/plans', { method: 'POST', body: JSON.stringify(body) });
    const ended = await follow(job);
    if (ended.state !== 'done') {
      const why = ended.state === 'cancelled' ? 'cancelled: nothing was stored' : ended.error?.message ?? ended.state;
      if (ended.state === 'cancelled') $('status').textContent = why;
      else {
        $('error').textContent = `${ended.state === 'timed-out' ? 'timed out' : 'failed'}: ${why}`;
        $('status').textContent = '';
      }
      return;
    }
    const plan = await api(`/api/plans/${ended.result.planId}`);
    const tbody = $('results').querySelector('tbody');
    tbody.replaceChildren(...plan.result.candidates.map((c) => {
      let last;
      if (c.feasible) {
        last = document.createElement('a');
        last.href = `/api/plans/${plan.id}/sheet?format=html&candidate=${encodeURIComponent(c.species)}`;
        last.textContent = 'bench sheet';
        last.target = '_blank';
        // a service that wants a token for reads too: fetch the sheet with it and show what came
        last.addEventListener('click', async (ev) => {
          if (!('authorization' in authHeaders())) return;
          ev.preventDefault();
          const w = window.open('', '_blank');
          const r = await fetch(last.href, { headers: authHeaders() });
          if (w) w.location.href = URL.createObjectURL(await r.blob());
        });
      } else last = `${c.reason}: ${c.message}`;
      // quantiles over every draw (zeros included); null means above the dose cap
      const q = (v) => (v === null ? 'above cap' : perMl(v));
      const band = c.band ? `${q(c.band.p05)} – ${q(c.band.p95)}${c.band.alreadyPast > 0 ? ` (${num(100 * c.band.alreadyPast, 3)} % of draws already past)` : ''}` : '—';
      const path = (c.dosePath ?? []).map((iv, i) => (i === 0 ? iv.state : `${iv.state} from ${perMl(iv.from)}`)).join(' → ') || '—';
      // the candidate's own warnings and those of the mixture at its threshold dose (fuel, gas, settling): the CLI prints both
      const warn = [...(c.warnings ?? []), ...(c.atMargin?.warnings ?? [])].map((w) => w.message).join(' ') || '';
      const at = c.atMargin ? `${c.atMargin.state}${c.atMargin.growthTime ? `, growth ${num(c.atMargin.growthTime / 60, 3)} min` : ''}` : '—';
      return row(String(c.rank), c.species, c.feasible ? (c.threshold.anyDose ? 'any dose' : perMl(c.threshold.density)) : '—', band, path, at, last, warn);
    }));
    $('results').hidden = false;
    if (plan.result.stateMap) drawMap(plan.result.stateMap);
    else $('mapFigure').hidden = true;
    const planWarnings = (plan.result.warnings ?? []).map((w) => w.message).join(' ');
    $('status').textContent = `plan ${plan.id} stored${planWarnings ? ` — ${planWarnings}` : ''}`;
    await listPlans();
  } catch (e) {
    $('error').textContent = e.message;
    $('status').textContent = '';
  } finally {
    $('run').disabled = false;
    $('jobBox').hidden = true;
  }
});
// A job's progress: server-sent events (GET /api/jobs/:id/events), or polling if the stream breaks.
// Resolves with the job as it ended (done, failed, cancelled or timed-out).
const ENDED = ['done', 'failed', 'cancelled', 'timed-out'];
let current = null;
function show(job) {
  $('jobProgress').value = job.progress.fraction;
  $('jobStage').textContent = `${job.state}: ${Math.floor(100 * job.progress.fraction)} % — ${job.progress.stage}`;
  $('status').textContent = job.state === 'queued' ? 'waiting for a worker…' : 'computing…';
}
function follow(job) {
  current = job.id;
  $('jobBox').hidden = false;
  $('cancel').disabled = false;
  show(job);
  return new Promise((resolve, reject) => {
    const poll = async () => {
      try {
        let j = await api(`/api/jobs/${job.id}`);
        while (!ENDED.includes(j.state)) {
          show(j);
          await new Promise((r) => setTimeout(r, 500));
          j = await api(`/api/jobs/${job.id}`);
        }
        resolve(j);
      } catch (e) {
        reject(e);
      }
    };
    if (typeof EventSource !== 'function') return void poll();
    const es = new EventSource(`/api/jobs/${job.id}/events`);
    es.addEventListener('progress', (ev) => show(JSON.parse(ev.data)));
    es.addEventListener('end', (ev) => {
      es.close();
      resolve(JSON.parse(ev.data));
    });
    es.onerror = () => {
      es.close();
      poll();
    };
  }).finally(() => {
    current = null;
  });
}
$('cancel').addEventListener('click', async () => {
  if (!current) return;
  $('cancel').disabled = true;
  // no content-type: a DELETE has no body (api() would declare JSON)
  const r = await fetch(`/api/jobs/${current}`, { method: 'DELETE', headers: authHeaders() });
  if (!r.ok) $('error').textContent = (await r.json().catch(() => ({}))).message ?? `cancel failed (${r.status})`;
});
// State map: base factor (x, log) against dose (y, log); cells by state, boundaries as lines,
// the bench sheet's dose series as marks at base factor 1.
const COLOURS = { stable: '#e3eee6', stationary: '#f2c9a5', oscillatory: '#b9c9ef' };
function drawMap(m) {
  const NS = 'http://www.w3.org/2000/svg';
  const svg = $('map');
  svg.replaceChildren();
  const W = 720, H = 420, L = 70, R = 20, T = 34, B = 50;
  const fx = m.baseAxis.factor, dy = m.doseAxis;
  const lx = (f) => L + ((W - L - R) * Math.log(f / fx[0])) / Math.log(fx[fx.length - 1] / fx[0]);
  const ly = (d) => H - B - ((H - T - B) * Math.log(d / dy[0])) / Math.log(dy[dy.length - 1] / dy[0]);
  const el = (name, attrs, text) => {
    const e = document.createElementNS(NS, name);
    for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, v);
    if (text !== undefined) e.textContent = text;
    svg.append(e);
    return e;
  };
  const edge = (arr, i, f) => (i === 0 ? f(arr[0]) : i === arr.length ? f(arr[arr.length - 1]) : (f(arr[i - 1]) + f(arr[i])) / 2);
  m.states.forEach((row, i) => row.forEach((state, j) => {
    const x0 = edge(fx, i, lx), x1 = edge(fx, i + 1, lx), y0 = edge(dy, j + 1, ly), y1 = edge(dy, j, ly);
    el('rect', { x: x0, y: y0, width: x1 - x0, height: y1 - y0, fill: COLOURS[state] ?? '#ccc' });
  }));
  for (const b of m.boundaries) el('polyline', { points: b.points.map(([f, d]) => `${lx(f)},${ly(d)}`).join(' '), fill: 'none', stroke: '#1d2a2f', 'stroke-width': 2 });
  if (fx[0] <= 1 && fx[fx.length - 1] >= 1) for (const d of m.doseSeries.filter((d) => d >= dy[0] && d <= dy[dy.length - 1])) el('circle', { cx: lx(1), cy: ly(d), r: 4, fill: '#2f6f5e' });
  el('text', { x: L, y: H - 12 }, `base level × (${num(fx[0], 2)} … ${num(fx[fx.length - 1], 2)}, log)`);
  el('text', { x: 6, y: 18 }, `dose, log (top ${num(dy[dy.length - 1] * 1e-6, 2)} /mL)`);
  el('text', { x: 6, y: H - B + 16 }, `${num(dy[0] * 1e-6, 2)} /mL`);
  $('mapCaption').textContent = `State map for ${m.candidate}: pale green stable, orange stationary, blue oscillatory; black lines are the boundaries; dots are the bench sheet's dose series at the base as planned.`;
  $('mapFigure').hidden = false;
}
init().catch((e) => ($('error').textContent = e.message));
