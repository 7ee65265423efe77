// The Calibrate page (/calibrate): fit raw data, plot it, store it as a measurement.
import { api, row, num } from '/web/common.js';
const $ = (id) => document.getElementById(id);
const NS = 'http://www.w3.org/2000/svg';
async function init() {
  const sp = await api('/api/species?limit=500');
  $('species').replaceChildren(...sp.items.map((s) => new Option(`${s.id} — ${s.name}`, s.id)));
}
const body = () => ({ data: $('data').value, options: $('method').value === 'msd' ? { model: $('model').value } : {} });
$('method').addEventListener('change', () => ($('modelLabel').hidden = $('method').value !== 'msd'));
function plot(fit) {
  // data (points) and the fitted curve (line) against the first column, both as fitted
  const svg = $('plot');
  svg.replaceChildren();
  const y = fit.fitted.map((f, i) => f + fit.residuals[i]);
  const x = fit.x;
  const all = [...y, ...fit.fitted];
  const lo = Math.min(...all), hi = Math.max(...all);
  const x0 = Math.min(...x), x1 = Math.max(...x);
  const W = 640, H = 300, pad = 30;
  const px = (i) => pad + ((W - 2 * pad) * (x[i] - x0)) / (x1 - x0 || 1);
  const py = (v) => H - pad - ((H - 2 * pad) * (v - lo)) / (hi - lo || 1);
  const line = document.createElementNS(NS, 'polyline');
  line.setAttribute('points', fit.fitted.map((v, i) => `${px(i)},${py(v)}`).join(' '));
  line.setAttribute('fill', 'none');
  line.setAttribute('stroke', '#2f6f5e');
  svg.append(line);
  y.forEach((v, i) => {
    const c = document.createElementNS(NS, 'circle');
    c.setAttribute('cx', px(i)); c.setAttribute('cy', py(v)); c.setAttribute('r', 3); c.setAttribute('fill', '#b5651d');
    svg.append(c);
  });
  const t = document.createElementNS(NS, 'text');
  t.setAttribute('x', pad); t.setAttribute('y', 16); t.textContent = 'points: data; line: fit (SI units, against the first column)';
  svg.append(t);
  svg.hidden = false;
}
$('fit').addEventListener('submit', async (ev) => {
  ev.preventDefault();
  $('error').textContent = '';
  try {
    const fit = await api(`/api/fits/${$('method').value}`, { method: 'POST', body: JSON.stringify(body()) });
    $('params').querySelector('tbody').replaceChildren(...Object.entries(fit.parameters).map(([k, p]) => row(k, num(p.value), p.fixed ? 'fixed' : p.atBound ? `on its ${p.atBound} bound` : num(p.sd, 2), p.unit)));
    $('params').hidden = false;
    $('gof').textContent = `residual standard error ${num(fit.residualStandardError, 3)} on ${fit.dof} degrees of freedom, R² ${num(fit.rSquared, 4)}, ${fit.points} points; ${fit.weighting}; ${fit.converged ? 'converged' : `NOT converged (${fit.stop})`}` + (fit.notes?.length ? ` — ${fit.notes.join(' ')}` : '');
    plot(fit);
    $('store').disabled = false;
  } catch (e) {
    $('error').textContent = e.message;
  }
});
$('store').addEventListener('click', async () => {
  try {
    const m = await api(`/api/species/${encodeURIComponent($('species').value)}/measurements`, { method: 'POST', body: JSON.stringify({ method: $('method').value, ...body() }) });
    $('status').textContent = `stored as measurement ${m.id}; apply it with POST /api/measurements/${m.id}/apply`;
  } catch (e) {
    $('error').textContent = e.message;
  }
});
init().catch((e) => ($('error').textContent = e.message));
