// The Shelf page (/): species and chemicals with their values as typed.
// Plain page over the HTTP API: values are shown as they were typed.
import { api, cell, typed } from '/web/common.js';
function coupling(c) {
  const a = c.activity;
  const act = a === undefined ? '' : 'maxRate' in a ? `turns over ${typed(a.maxRate)} (K ${typed(a.michaelis)})` : `activity ${typed(a)}`;
  const mob = c.mobility === undefined ? '' : `mobility ${typed(c.mobility)}`;
  return `${c.chemical}: ${[act, mob].filter(Boolean).join(', ')}`;
}
async function load() {
  const q = encodeURIComponent(document.getElementById('q').value);
  const retired = document.getElementById('retired').checked;
  const qs = `?limit=500&q=${q}&includeRetired=${retired}`;
  const [sp, ch] = await Promise.all([api('/api/species' + qs), api('/api/chemicals' + qs)]);
  const sb = document.querySelector('#species tbody');
  sb.replaceChildren(...sp.items.map((r) => {
    const tr = document.createElement('tr');
    tr.append(cell(r.id), cell(r.name + (r.retired ? ' (retired)' : '')), cell(r.kind), cell(typed(r.record.diffusivity)), cell(typed(r.record.radius)), cell(r.record.couplings.map(coupling).join('; ')), cell(String(r.revision)));
    return tr;
  }));
  const cb = document.querySelector('#chemicals tbody');
  cb.replaceChildren(...ch.items.map((r) => {
    const tr = document.createElement('tr');
    tr.append(cell(r.id), cell(r.name + (r.retired ? ' (retired)' : '')), cell(typed(r.record.diffusivity)), cell(typed(r.record.lossRate)), cell(String(r.revision)));
    return tr;
  }));
  document.getElementById('status').textContent = `${sp.total} species, ${ch.total} chemicals`;
}
document.getElementById('q').addEventListener('input', load);
document.getElementById('retired').addEventListener('change', load);
load().catch((e) => (document.getElementById('status').textContent = e.message));
