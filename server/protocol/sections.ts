/**
 * The bench sheet as one ordered list of sections: the only thing the HTML and
 * Markdown renderings read (render.ts), and the `sections` field of the JSON
 * rendering. Every text is final: numbers are already formatted with their
 * units, so a rendering only escapes and lays out, and a parity test can look
 * for every string of the model in every rendering (docs/model.md §11).
 *
 * A `null` cell or value is a blank to fill in at the bench (an observation, a
 * check box, the operator's name); it is never "unknown" (that is said in words).
 */

import { formatNumber } from '../units/display.js';

/** One column of a table. `check`: a blank cell is a check box; `blank`: a column filled in by hand (wide, empty). */
export interface Column {
  id: string;
  label: string;
  /** right-aligned (numbers with units) */
  numeric?: boolean;
  /** blank cells of this column are check boxes (☐ / [ ]) */
  check?: boolean;
  /** a column to fill in by hand */
  blank?: boolean;
}

/** A table row; `code` is the tube code when the row is one tube (the key that observations are entered back under). */
export interface Row {
  cells: (string | null)[];
  code?: string;
}

export type Block =
  /** a sub-heading inside a section (one level below the section's title) */
  | { kind: 'heading'; text: string }
  | { kind: 'paragraph'; text: string; muted?: boolean }
  | { kind: 'list'; items: string[]; ordered?: boolean }
  /** label/value pairs; a null value is a blank field to fill in */
  | { kind: 'keyValue'; rows: { key: string; value: string | null }[] }
  | { kind: 'table'; caption?: string; columns: Column[]; rows: Row[] }
  /** shown prominently (boxed, bold title) in every rendering */
  | { kind: 'caution'; title: string; text: string };

export interface Section {
  /** stable id (e.g. "pipetting", "hazards"): scripts and tests find a section by it */
  id: string;
  title: string;
  blocks: Block[];
}

/** Every text of a block, in order (titles, captions, column labels, cells, keys, values); blanks (null) are skipped. */
export function blockTexts(b: Block): string[] {
  switch (b.kind) {
    case 'heading':
    case 'paragraph':
      return [b.text];
    case 'list':
      return [...b.items];
    case 'keyValue':
      return b.rows.flatMap((r) => (r.value === null ? [r.key] : [r.key, r.value]));
    case 'table':
      return [...(b.caption !== undefined ? [b.caption] : []), ...b.columns.map((c) => c.label), ...b.rows.flatMap((r) => r.cells.filter((c): c is string => c !== null))];
    case 'caution':
      return [b.title, b.text];
  }
}

/** Every text of a sheet's sections (section titles included), for parity checks. */
export function sectionTexts(sections: readonly Section[]): string[] {
  return sections.flatMap((s) => [s.title, ...s.blocks.flatMap(blockTexts)]);
}

/** 1.433 × 10⁸ for large or small numbers, plain otherwise (four significant figures): the pages' and the CLI's own (server/units/display.ts). */
export { formatNumber };

/** "2.043 µL" from { value, unit }; "—" for none. */
export const fmtAmount = (a: { value: number; unit: string } | null | undefined): string => (a ? `${formatNumber(a.value)} ${a.unit}` : '—');

/** A table block from columns and rows (a small convenience for builders). */
export function table(columns: Column[], rows: Row[], caption?: string): Extract<Block, { kind: 'table' }> {
  for (const r of rows) if (r.cells.length !== columns.length) throw new Error(`table row has ${r.cells.length} cells for ${columns.length} columns`);
  return caption === undefined ? { kind: 'table', columns, rows } : { kind: 'table', caption, columns, rows };
}
