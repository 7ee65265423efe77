/**
 * Plots: Observable Plot (a well-kept plotting library on d3) with brink's own look. Every plot is
 * made by `figure()`: axes labelled with their units, ticks, a caption, and states told apart by a
 * fill pattern and a label as well as colour (STATES). Plot puts a <style> element inside its SVG;
 * the service's content security policy allows no inline style, so `figure()` removes it before the
 * SVG joins the page and style.css carries the same rules (.plot-figure svg).
 */
import * as Plot from '@observablehq/plot';
import { h } from './dom.js';

/** brink's palette: ink, muted ink, accent, and one colour per state. */
export const INK = '#1d2a31';
export const MUTED = '#6b7a83';
export const ACCENT = '#b5651d';

/** The three states of a mixture, each with a colour, a fill pattern and words. */
export const STATES = {
  stable: { color: '#cfe3dc', pattern: 'brink-pat-stable', label: 'stable (stays mixed)' },
  stationary: { color: '#e8b04a', pattern: 'brink-pat-stationary', label: 'stationary (clusters or demixes)' },
  oscillatory: { color: '#7c6bb0', pattern: 'brink-pat-oscillatory', label: 'oscillatory (travelling patterns)' },
} as const;
export type StateName = keyof typeof STATES;

const SVG = 'http://www.w3.org/2000/svg';

/** <defs> with one pattern per state: plain for stable, diagonal hatching for stationary, dots for oscillatory. */
function stateDefs(): SVGDefsElement {
  const defs = document.createElementNS(SVG, 'defs');
  const make = (id: string, color: string, draw: (p: SVGPatternElement) => void) => {
    const p = document.createElementNS(SVG, 'pattern');
    p.setAttribute('id', id);
    p.setAttribute('patternUnits', 'userSpaceOnUse');
    p.setAttribute('width', '8');
    p.setAttribute('height', '8');
    const bg = document.createElementNS(SVG, 'rect');
    bg.setAttribute('width', '8');
    bg.setAttribute('height', '8');
    bg.setAttribute('fill', color);
    p.append(bg);
    draw(p);
    defs.append(p);
  };
  const line = (p: SVGPatternElement, d: string) => {
    const path = document.createElementNS(SVG, 'path');
    path.setAttribute('d', d);
    path.setAttribute('stroke', INK);
    path.setAttribute('stroke-opacity', '0.45');
    path.setAttribute('stroke-width', '1.2');
    p.append(path);
  };
  make(STATES.stable.pattern, STATES.stable.color, () => undefined);
  make(STATES.stationary.pattern, STATES.stationary.color, (p) => line(p, 'M-2,2 l4,-4 M0,8 l8,-8 M6,10 l4,-4'));
  make(STATES.oscillatory.pattern, STATES.oscillatory.color, (p) => {
    const c = document.createElementNS(SVG, 'circle');
    c.setAttribute('cx', '4');
    c.setAttribute('cy', '4');
    c.setAttribute('r', '1.6');
    c.setAttribute('fill', '#ffffff');
    c.setAttribute('fill-opacity', '0.8');
    p.append(c);
  });
  return defs;
}

/** fill for a state: its pattern (which carries its colour) */
export const stateFill = (s: string): string => (s in STATES ? `url(#${STATES[s as StateName].pattern})` : '#dddddd');

/** A legend of the states as HTML (swatches with the same patterns, and words). */
export function stateLegend(states: readonly string[] = Object.keys(STATES)): HTMLElement {
  return h(
    'ul',
    { class: 'legend' },
    states.filter((s) => s in STATES).map((s) => h('li', null, h('span', { class: `swatch swatch-${s}`, 'aria-hidden': 'true' }), STATES[s as StateName].label)),
  );
}

export interface FigureOptions extends Plot.PlotOptions {
  /** what the plot shows, in words: the figure's caption and the SVG's aria-label */
  caption: string;
}

/** A plot with brink's look, as a <figure> with a caption. */
export function figure(o: FigureOptions): HTMLElement {
  const { caption, ...options } = o;
  const svg = Plot.plot({
    width: 640,
    height: 320,
    marginLeft: 64,
    marginBottom: 44,
    style: { fontFamily: 'inherit', fontSize: '12px', color: INK, background: 'transparent', overflow: 'visible' },
    ariaLabel: caption,
    ...options,
    x: { labelAnchor: 'center', labelArrow: 'none', ...options.x },
    y: { labelAnchor: 'center', labelArrow: 'none', grid: true, ...options.y },
  });
  for (const s of svg.querySelectorAll('style')) s.remove();
  const root = svg instanceof SVGSVGElement ? svg : svg.querySelector('svg');
  root?.prepend(stateDefs());
  return h('figure', { class: 'plot-figure' }, svg, h('figcaption', null, caption));
}

export { Plot };
