/**
 * The Shelf page (/): the lab's chemicals and species with their key coefficients in bench units,
 * searched and filtered; links to each item's page; import and export of the whole shelf.
 */
import { mountPage } from '../lib/layout.js';
import { api, ApiError } from '../lib/api.js';
import { debounce, download, field, h, put, type Child } from '../lib/dom.js';
import { fmtWithSd, type DisplayKind } from '../lib/format.js';
import { conflictWords, type ImportConflict } from './shelf-logic.js';
import './shelf.css';

interface Stored {
  si: number;
  sd: number;
  input: string | number;
}
interface Coupling {
  chemical: string;
  activity?: Stored | { maxRate: Stored; michaelis: Stored; product?: string | null; productYield?: number };
  mobility?: Stored;
}
interface Item {
  id: string;
  name: string;
  kind: string | null;
  revision: number;
  retired: boolean;
  author: string;
  createdAt: string;
  record: {
    diffusivity: Stored;
    radius?: Stored;
    lossRate?: Stored;
    molarMass?: Stored;
    solubility?: Stored;
    couplings?: Coupling[];
  };
}
interface ListAnswer {
  items: Item[];
  total: number;
}

const page = mountPage('Shelf', 'shelf');

const q = h('input', { id: 'q', type: 'search', placeholder: 'name or id', autocomplete: 'off' });
const kind = h('select', { id: 'kind' }, h('option', { value: '' }, 'any kind'), h('option', { value: 'colloid' }, 'colloid'), h('option', { value: 'enzyme' }, 'enzyme'), h('option', { value: 'other' }, 'other'));
const couples = h('select', { id: 'couples' }, h('option', { value: '' }, 'any chemical'));
const retired = h('input', { id: 'retired', type: 'checkbox' });
const counts = h('p', { class: 'muted', id: 'counts', 'aria-live': 'polite' });
const speciesBox = h('section', { 'aria-labelledby': 'species-h' });
const chemicalsBox = h('section', { 'aria-labelledby': 'chemicals-h' });
const importBox = h('div', { id: 'import-result' });

const fileInput = h('input', { id: 'import-file', type: 'file', accept: '.json,application/json' });
const exportButton = h('button', { type: 'button', class: 'secondary', id: 'export' }, 'Export the shelf');

page.main.append(
  h('div', { class: 'shelf-head' }, h('h1', null, 'Shelf'), h('div', { class: 'actions' }, h('a', { class: 'button', href: '/shelf/new?kind=species', id: 'new-species' }, 'New species'), h('a', { class: 'button', href: '/shelf/new?kind=chemical', id: 'new-chemical' }, 'New chemical'))),
  h('p', { class: 'muted' }, 'The chemicals and particle or enzyme species of this lab, each with its coefficients as measured or looked up. Every change is kept as a revision; values show with their standard uncertainty (±).'),
  h(
    'form',
    { class: 'filters', role: 'search', onsubmit: (e: Event) => e.preventDefault() },
    field('Search', q, 'part of a name or id'),
    field('Species kind', kind),
    field('Couples to', couples, 'species acting on or moving in this chemical'),
    h('div', { class: 'field check' }, h('label', { for: 'retired' }, retired, ' show retired items')),
  ),
  counts,
  speciesBox,
  chemicalsBox,
  h(
    'section',
    { 'aria-labelledby': 'io-h', class: 'card io' },
    h('h2', { id: 'io-h' }, 'Import and export'),
    h('p', null, 'Export writes the whole shelf (retired items included) as one brink-shelf JSON file. Import reads such a file: all or nothing — if any entry is wrong, nothing is written and every problem is listed.'),
    h('div', { class: 'row' }, exportButton, field('Import a brink-shelf file', fileInput)),
    importBox,
  ),
);

/** A stored value in bench units with its uncertainty. */
const val = (x: Stored | undefined, k: DisplayKind): string => (x ? fmtWithSd(x.si, x.sd, k) : '—');

function couplingText(c: Coupling): Child {
  const parts: string[] = [];
  const a = c.activity;
  if (a && 'maxRate' in a) {
    parts.push(`turns over up to ${val(a.maxRate, 'amountRate')} (Michaelis constant ${val(a.michaelis, 'concentration')}${a.product ? `, makes ${a.productYield !== undefined ? `${a.productYield} ` : ''}${a.product}${a.productYield !== undefined ? ` per ${c.chemical}` : ''}` : ''})`);
  } else if (a) parts.push(`activity ${val(a, 'amountRate')}${a.si < 0 ? ' (consumes)' : a.si > 0 ? ' (produces)' : ''}`);
  if (c.mobility) parts.push(`mobility ${val(c.mobility, 'mobility')}`);
  return h('li', null, h('strong', { title: chemicalNames.get(c.chemical) ?? '' }, c.chemical), ': ', parts.join('; '));
}

function nameCell(it: Item, path: string): Child {
  return [h('a', { href: `${path}/${encodeURIComponent(it.id)}` }, it.name), h('div', { class: 'muted mono' }, it.id), it.retired ? h('span', { class: 'tag retired' }, 'retired') : null];
}

let chemicalNames = new Map<string, string>();

async function loadChemicalChoices(): Promise<void> {
  const all = await api<ListAnswer>('/api/chemicals?limit=500&includeRetired=true');
  chemicalNames = new Map(all.items.map((c) => [c.id, c.name]));
  const keep = couples.value;
  put(couples, h('option', { value: '' }, 'any chemical'), all.items.map((c) => h('option', { value: c.id }, `${c.name} (${c.id})`)));
  couples.value = keep;
}

let seq = 0;
async function load(): Promise<void> {
  const mine = ++seq;
  const params = new URLSearchParams({ limit: '500', includeRetired: String(retired.checked) });
  if (q.value.trim()) params.set('q', q.value.trim());
  const sp = new URLSearchParams(params);
  if (kind.value) sp.set('kind', kind.value);
  const [species, chemicals] = await Promise.all([api<ListAnswer>(`/api/species?${sp}`), api<ListAnswer>(`/api/chemicals?${params}`)]);
  if (mine !== seq) return;
  const chem = couples.value;
  const shownSpecies = chem ? species.items.filter((s) => (s.record.couplings ?? []).some((c) => c.chemical === chem || (c.activity && 'maxRate' in c.activity && c.activity.product === chem))) : species.items;
  const shownChemicals = chem ? chemicals.items.filter((c) => c.id === chem) : chemicals.items;
  const filtered = Boolean(q.value.trim() || kind.value || chem);
  const cut = [species.total > species.items.length ? `the first ${species.items.length} of ${species.total} species` : '', chemicals.total > chemicals.items.length ? `the first ${chemicals.items.length} of ${chemicals.total} chemicals` : ''].filter(Boolean);
  counts.textContent =
    `${shownSpecies.length} species and ${shownChemicals.length} chemicals shown${filtered ? ' (filtered)' : ''}${retired.checked ? ', retired ones included' : ''}.` +
    (cut.length ? ` Only ${cut.join(' and ')} were read: search to narrow the list.` : '');

  const emptyShelf = !filtered && species.total === 0 && chemicals.total === 0;
  if (emptyShelf) {
    put(
      speciesBox,
      h(
        'div',
        { class: 'empty', id: 'empty-shelf' },
        h('h2', null, 'The shelf is empty'),
        h('p', null, 'Start with what your particles act on: '),
        h('ol', null, h('li', null, h('a', { href: '/shelf/new?kind=chemical' }, 'add a chemical'), ' (a fuel such as hydrogen peroxide, with its diffusivity);'), h('li', null, 'then ', h('a', { href: '/shelf/new?kind=species' }, 'add a species'), ' (a particle or an enzyme, with its diffusivity, radius and how it couples to each chemical);'), h('li', null, 'or import a brink-shelf file below (an export of another shelf).')),
      ),
    );
    put(chemicalsBox);
    return;
  }

  put(
    speciesBox,
    h('h2', { id: 'species-h' }, 'Species'),
    shownSpecies.length === 0
      ? h('p', { class: 'empty' }, species.total === 0 && !filtered ? ['No species yet. ', h('a', { href: '/shelf/new?kind=species' }, 'Add one'), ' once its chemicals are on the shelf.'] : 'No species match the search and filters.')
      : h(
          'table',
          { id: 'species', class: 'shelf-table' },
          h('caption', { class: 'visually-hidden' }, 'Species on the shelf'),
          h('thead', null, h('tr', null, ['Name and id', 'Kind', 'Diffusivity', 'Radius', 'Couplings (activity, mobility)', 'Revision'].map((t, i) => h('th', { scope: 'col', class: [2, 3, 5].includes(i) ? 'num' : '' }, t)))),
          h(
            'tbody',
            null,
            shownSpecies.map((s) =>
              h(
                'tr',
                { class: s.retired ? 'is-retired' : '' },
                h('td', null, nameCell(s, '/shelf/species')),
                h('td', null, s.kind ?? ''),
                h('td', { class: 'num' }, val(s.record.diffusivity, 'diffusivity')),
                h('td', { class: 'num' }, val(s.record.radius, 'length')),
                h('td', null, (s.record.couplings ?? []).length ? h('ul', { class: 'couplings' }, (s.record.couplings ?? []).map(couplingText)) : h('span', { class: 'muted' }, 'none: inert')),
                h('td', { class: 'num' }, String(s.revision)),
              ),
            ),
          ),
        ),
  );
  put(
    chemicalsBox,
    h('h2', { id: 'chemicals-h' }, 'Chemicals'),
    shownChemicals.length === 0
      ? h('p', { class: 'empty' }, chemicals.total === 0 && !filtered ? ['No chemicals yet. ', h('a', { href: '/shelf/new?kind=chemical' }, 'Add the first one'), ': species couple to chemicals.'] : 'No chemicals match the search and filters.')
      : h(
          'table',
          { id: 'chemicals', class: 'shelf-table' },
          h('caption', { class: 'visually-hidden' }, 'Chemicals on the shelf'),
          h('thead', null, h('tr', null, ['Name and id', 'Diffusivity', 'Loss rate', 'Molar mass', 'Solubility', 'Revision'].map((t, i) => h('th', { scope: 'col', class: i > 0 ? 'num' : '' }, t)))),
          h(
            'tbody',
            null,
            shownChemicals.map((c) =>
              h(
                'tr',
                { class: c.retired ? 'is-retired' : '' },
                h('td', null, nameCell(c, '/shelf/chemicals')),
                h('td', { class: 'num' }, val(c.record.diffusivity, 'diffusivity')),
                h('td', { class: 'num' }, c.record.lossRate ? val(c.record.lossRate, 'rate') : '—'),
                h('td', { class: 'num' }, c.record.molarMass ? val(c.record.molarMass, 'molarMass') : '—'),
                h('td', { class: 'num' }, c.record.solubility ? val(c.record.solubility, 'concentration') : '—'),
                h('td', { class: 'num' }, String(c.revision)),
              ),
            ),
          ),
        ),
  );
}

const reload = () => load().catch(page.fail);
q.addEventListener('input', debounce(reload, 200));
for (const el of [kind, couples, retired]) el.addEventListener('change', reload);

exportButton.addEventListener('click', async () => {
  try {
    const doc = await api<unknown>('/api/shelf/export');
    download(`brink-shelf-${new Date().toISOString().slice(0, 10)}.json`, JSON.stringify(doc, null, 2));
    page.say('The shelf was exported (a brink-shelf JSON file, in your downloads).', 'ok');
  } catch (e) {
    page.fail(e);
  }
});

interface ImportSummary {
  created: number;
  revised: number;
  unchanged: number;
  overwritten: number;
}

async function importDoc(doc: unknown, name: string, overwrite: boolean): Promise<void> {
  put(importBox, h('p', { class: 'muted' }, `Importing ${name}…`));
  try {
    const s = await api<ImportSummary>(`/api/shelf/import?overwrite=${overwrite}`, { body: doc });
    put(importBox, h('p', { class: 'msg ok', id: 'import-done' }, `Imported ${name}: ${s.created} created, ${s.revised} revised${s.overwritten ? ` (${s.overwritten} over newer edits; the replaced revisions stay in each item's history)` : ''}, ${s.unchanged} unchanged.`));
    await loadChemicalChoices();
    await load();
  } catch (e) {
    if (e instanceof ApiError && e.code === 'import-conflict') {
      const conflicts = (e.body.conflicts ?? []) as ImportConflict[];
      put(
        importBox,
        h(
          'div',
          { class: 'msg error', id: 'import-conflicts', role: 'alert' },
          h('p', null, `Nothing was imported: ${conflicts.length} ${conflicts.length === 1 ? 'entry' : 'entries'} of ${name} would undo changes made on this shelf since the file was exported.`),
          h('ul', null, conflicts.map((c) => h('li', null, conflictWords(c)))),
          h('p', null, 'Either export the shelf again and redo your changes in the new file, or overwrite: the file’s values become new revisions, and what the shelf has now stays readable in each item’s history.'),
          h('div', { class: 'actions' }, h('button', { type: 'button', class: 'danger', id: 'import-overwrite', onclick: () => void importDoc(doc, name, true) }, 'Overwrite with the file’s values'), h('button', { type: 'button', class: 'secondary', onclick: () => put(importBox) }, 'Cancel')),
        ),
      );
    } else if (e instanceof ApiError && e.problems.length) {
      put(importBox, h('div', { class: 'msg error', role: 'alert' }, h('p', null, `Nothing was imported: ${name} has ${e.problems.length} problem${e.problems.length === 1 ? '' : 's'}.`), h('ul', null, e.problems.map((p) => h('li', null, p.path ? `${p.path}: ${p.message}` : p.message)))));
    } else {
      put(importBox);
      page.fail(e);
    }
  }
}

fileInput.addEventListener('change', async () => {
  const f = fileInput.files?.[0];
  if (!f) return;
  let doc: unknown;
  try {
    doc = JSON.parse(await f.text());
  } catch {
    put(importBox, h('p', { class: 'msg error', role: 'alert' }, `${f.name} is not a JSON file (a brink-shelf export is JSON).`));
    return;
  } finally {
    fileInput.value = '';
  }
  await importDoc(doc, f.name, false);
});

void (async () => {
  try {
    await loadChemicalChoices();
    await load();
  } catch (e) {
    page.fail(e);
  }
})();
