/**
 * The text of a PDF as Chromium prints it, for tests: its objects read, Flate streams inflated (node:zlib),
 * each font's ToUnicode CMap read (bfchar and bfrange, PDF 32000-1:2008 §9.10.3), and the text-showing operators
 * of the page content streams (Tj, TJ) decoded through the font selected by Tf. Text objects and moves to
 * another line become line breaks and spaces; Chromium's glyph-by-glyph moves along a line do not. Enough to check that printed words are in the file; not a general
 * PDF reader (no object streams, no encryption, no Type 3 glyph names).
 */
import { inflateSync } from 'node:zlib';

interface Obj {
  dict: string;
  stream: Buffer | null;
}

function objects(pdf: Buffer): Map<number, Obj> {
  const s = pdf.toString('latin1');
  const out = new Map<number, Obj>();
  const re = /(\d+)\s+0\s+obj\b/g;
  let m: RegExpExecArray | null;
  while ((m = re.exec(s)) !== null) {
    const start = m.index + m[0].length;
    const end = s.indexOf('endobj', start);
    if (end < 0) break;
    let body = s.slice(start, end);
    let stream: Buffer | null = null;
    const si = body.search(/\bstream\r?\n/);
    if (si >= 0) {
      const dict = body.slice(0, si);
      const len = /\/Length\s+(\d+)(?!\s+0\s+R)/.exec(dict);
      const dataStart = si + (body.startsWith('stream\r\n', si) ? 8 : 7);
      // the stream's bytes: /Length when given directly, else up to endstream
      const dataEnd = len ? dataStart + Number(len[1]) : body.lastIndexOf('endstream');
      const raw = Buffer.from(body.slice(dataStart, dataEnd), 'latin1');
      try {
        stream = /\/FlateDecode/.test(dict) ? inflateSync(raw) : raw;
      } catch {
        stream = null;
      }
      // skip past the stream so an "endobj" inside binary data cannot cut it short
      re.lastIndex = start + Math.max(dataEnd, 0);
      body = dict;
    } else re.lastIndex = end;
    out.set(Number(m[1]), { dict: body, stream });
  }
  return out;
}

/** A ToUnicode CMap: code (hex, as written) → text. */
function readCmap(text: string): { map: Map<string, string>; bytes: number } {
  const map = new Map<string, string>();
  let bytes = 2;
  const utf16 = (hex: string) => {
    let out = '';
    for (let i = 0; i + 4 <= hex.length; i += 4) out += String.fromCharCode(parseInt(hex.slice(i, i + 4), 16));
    return out;
  };
  const space = /begincodespacerange\s*<([0-9a-fA-F]+)>/.exec(text);
  if (space) bytes = space[1]!.length / 2;
  for (const block of text.matchAll(/beginbfchar([\s\S]*?)endbfchar/g)) {
    for (const e of block[1]!.matchAll(/<([0-9a-fA-F]+)>\s*<([0-9a-fA-F]*)>/g)) map.set(e[1]!.toUpperCase(), utf16(e[2]!));
  }
  for (const block of text.matchAll(/beginbfrange([\s\S]*?)endbfrange/g)) {
    for (const e of block[1]!.matchAll(/<([0-9a-fA-F]+)>\s*<([0-9a-fA-F]+)>\s*(<[0-9a-fA-F]+>|\[[^\]]*\])/g)) {
      const lo = parseInt(e[1]!, 16);
      const hi = parseInt(e[2]!, 16);
      const w = e[1]!.length;
      if (e[3]!.startsWith('[')) {
        const items = [...e[3]!.matchAll(/<([0-9a-fA-F]+)>/g)].map((x) => utf16(x[1]!));
        for (let c = lo; c <= hi && c - lo < items.length; c++) map.set(c.toString(16).toUpperCase().padStart(w, '0'), items[c - lo]!);
      } else {
        const dst = e[3]!.slice(1, -1);
        const base = parseInt(dst.slice(-4), 16);
        const head = utf16(dst.slice(0, -4));
        for (let c = lo; c <= hi; c++) map.set(c.toString(16).toUpperCase().padStart(w, '0'), head + String.fromCharCode(base + (c - lo)));
      }
    }
  }
  return { map, bytes };
}

/** Every text shown on the PDF's pages, in content-stream order. */
export function pdfText(pdf: Buffer): string {
  const objs = objects(pdf);
  const ref = (dict: string, key: string): number | null => {
    const m = new RegExp(`/${key}\\s+(\\d+)\\s+0\\s+R`).exec(dict);
    return m ? Number(m[1]) : null;
  };
  // font resource names → their CMaps (names are looked up across all resource dictionaries)
  const fonts = new Map<string, { map: Map<string, string>; bytes: number }>();
  const fontDicts: string[] = [];
  for (const o of objs.values()) {
    for (const m of o.dict.matchAll(/\/Font\s*<<([\s\S]*?)>>/g)) fontDicts.push(m[1]!);
    const ind = ref(o.dict, 'Font');
    if (ind !== null && objs.get(ind)) fontDicts.push(objs.get(ind)!.dict.replace(/^\s*<<|>>\s*$/g, ''));
  }
  for (const d of fontDicts) {
    for (const m of d.matchAll(/\/([^\s/<>[\]()]+)\s+(\d+)\s+0\s+R/g)) {
      if (fonts.has(m[1]!)) continue;
      const font = objs.get(Number(m[2]));
      const tu = font ? ref(font.dict, 'ToUnicode') : null;
      const cmap = tu !== null ? objs.get(tu)?.stream : null;
      if (cmap) fonts.set(m[1]!, readCmap(cmap.toString('latin1')));
    }
  }
  const pages = [...objs.values()].filter((o) => /\/Type\s*\/Page(?!s)/.test(o.dict));
  const out: string[] = [];
  for (const p of pages) {
    const arr = /\/Contents\s*\[([^\]]*)\]/.exec(p.dict);
    const ids = arr ? [...arr[1]!.matchAll(/(\d+)\s+0\s+R/g)].map((x) => Number(x[1])) : [ref(p.dict, 'Contents')].filter((x): x is number => x !== null);
    for (const id of ids) {
      const content = objs.get(id)?.stream?.toString('latin1') ?? '';
      let font: { map: Map<string, string>; bytes: number } | undefined;
      const decodeHex = (hex: string) => {
        if (!font) return '';
        const w = font.bytes * 2;
        let t = '';
        for (let i = 0; i + w <= hex.length; i += w) t += font.map.get(hex.slice(i, i + w).toUpperCase()) ?? '';
        return t;
      };
      const tokens = content.matchAll(/\/([^\s/<>[\]()]+)\s+[-\d.]+\s+Tf|<([0-9a-fA-F\s]*)>\s*Tj|\[((?:[^\]\\]|\\.)*)\]\s*TJ|([-\d.]+)\s+(?:Td|TD)\b|\b(T\*|ET|Tm)\b/g);
      for (const t of tokens) {
        if (t[1] !== undefined) font = fonts.get(t[1]);
        else if (t[2] !== undefined) out.push(decodeHex(t[2].replace(/\s+/g, '')));
        else if (t[3] !== undefined) {
          for (const part of t[3].matchAll(/<([0-9a-fA-F\s]*)>|(-?[\d.]+)/g)) {
            if (part[1] !== undefined) out.push(decodeHex(part[1].replace(/\s+/g, '')));
            else if (Number(part[2]) < -250) out.push(' ');
          }
        } else if (t[4] !== undefined) {
          // a move along the line (Chromium places glyph by glyph) is no break; a move to another line is
          if (Number(t[4]) !== 0) out.push(' ');
        } else out.push(t[5] === 'ET' ? '\n' : ' ');
      }
    }
    out.push('\n');
  }
  return out.join('').replace(/[ \t]+/g, ' ');
}
