/**
 * One axis of a panel, written as SVG in the panel's coordinates: grid lines, tick marks,
 * labels (with overlap removal) and the title, plus how far the axis reaches outside the
 * panel so that the figure can leave room for it.
 *
 * Geometry (common practice of the site's Vega figures, kept so every figure reads alike):
 * ticks 5 px outside the frame, labels 2 px beyond the ticks, the title 4 px beyond the
 * labels; tick and grid positions rounded to whole pixels and drawn on the half pixel, so
 * 1-px lines are crisp.
 */
import { COLOURS } from '../theme.ts';
import type { PositionScale } from './scale.ts';
import { attrs, baselineOffset, escapeXml, px, textWidth } from './write.ts';

export interface AxisOptions {
  orient: 'left' | 'bottom';
  scale: PositionScale;
  /** Height of the panel (a bottom axis stands below it). */
  height?: number;
  tickCount: number;
  title?: string;
  labelFontSize?: number;
  titleFontSize?: number;
  /** Grid lines across the panel (the panel's extent along the other axis). */
  grid?: number;
  /** Hide labels that overlap: 'parity' drops every other one until none overlap, 'greedy' drops each that overlaps the last kept. */
  labelOverlap?: 'parity' | 'greedy' | false;
  /** Labels within a pixel of either end of the axis are aligned inwards, so they stay inside the panel's span. */
  labelFlush?: boolean;
  /** Hide labels that would reach more than 2 px beyond the axis's ends (panels side by side). */
  labelBound?: boolean;
  /**
   * Estimated label width per character, in em: 0.8 (default) is the conservative estimate the
   * site's Vega figures use, so figures drawn alike keep the same labels; 0.6 is nearer the
   * digits of common sans-serif fonts, for small panels.
   */
  charWidth?: number;
}

export interface AxisResult {
  /** Grid lines (drawn under the marks). */
  grid: string;
  /** Ticks, labels and title. */
  svg: string;
  /** How far the axis reaches outside the panel, in pixels (left of x = 0, or below the bottom). */
  extent: number;
  /** The ticks and their labels ('' for an unlabelled tick). */
  ticks: { value: number; label: string }[];
}

const TICK = 5;
const LABEL_PAD = 2;
const TITLE_PAD = 4;

interface Label {
  text: string;
  x: number;
  y: number;
  anchor: 'start' | 'middle' | 'end';
  baseline: 'top' | 'middle' | 'bottom';
  box: [number, number, number, number];
  shown: boolean;
}

function labelBox(text: string, x: number, y: number, anchor: Label['anchor'], baseline: Label['baseline'], size: number, em: number): Label['box'] {
  const w = em === 0.8 ? textWidth(text, size) : Math.ceil(em * text.length * size);
  const y1 = y + baselineOffset(baseline, size) - Math.round(0.8 * size);
  const x1 = anchor === 'middle' ? x - w / 2 : anchor === 'end' ? x - w : x;
  return [x1, y1, x1 + w, y1 + size];
}

const overlaps = (a: Label['box'], b: Label['box']) => 0 > Math.max(b[0] - a[2], a[0] - b[2], b[1] - a[3], a[1] - b[3]);

function removeOverlaps(labels: Label[], method: 'parity' | 'greedy'): void {
  const source = labels.filter((l) => l.box[2] - l.box[0] > 1 && l.box[3] - l.box[1] > 1);
  const any = (items: Label[]) => items.some((l, i) => i > 0 && overlaps(items[i - 1].box, l.box));
  let items = source;
  if (items.length >= 3 && any(items)) {
    do {
      if (method === 'parity') items = items.filter((l, i) => (i % 2 ? ((l.shown = false), false) : true));
      else {
        let last: Label | null = null;
        items = items.filter((l, i) => {
          if (!i || !overlaps(last!.box, l.box)) {
            last = l;
            return true;
          }
          l.shown = false;
          return false;
        });
      }
    } while (items.length >= 3 && any(items));
    const end = source[source.length - 1];
    if (items.length < 3 && !end.shown) {
      if (items.length > 1) items[items.length - 1].shown = false;
      end.shown = true;
    }
  }
}

/** Write one axis (see `AxisOptions`). */
export function axis(o: AxisOptions): AxisResult {
  const labelSize = o.labelFontSize ?? 11;
  const titleSize = o.titleFontSize ?? 12;
  const values = o.scale.ticks(o.tickCount);
  const fmt = o.scale.tickLabel(o.tickCount);
  const [r0, r1] = o.scale.range;
  const lo = Math.min(r0, r1), hi = Math.max(r0, r1);
  const left = o.orient === 'left';
  const em = o.charWidth ?? 0.8;
  const base = (o.height ?? 0) + 0.5;
  const ticks: AxisResult['ticks'] = [];
  const labels: Label[] = [];
  let tickD = '';
  let gridD = '';
  for (const v of values) {
    const p = o.scale(v);
    if (!Number.isFinite(p)) continue;
    const q = Math.round(p) + 0.5;
    const text = fmt(v);
    ticks.push({ value: v, label: text });
    if (left) {
      tickD += `M0.5,${px(q)}h-${TICK}`;
      if (o.grid) gridD += `M0.5,${px(q)}h${px(o.grid)}`;
    } else {
      tickD += `M${px(q)},${px(base)}v${TICK}`;
      if (o.grid) gridD += `M${px(q)},${px(base - o.grid)}v${px(o.grid)}`;
    }
    // labels within a pixel of an end are aligned inwards (flush)
    const dl = Math.abs(p - lo), dr = Math.abs(hi - p);
    const flush = o.labelFlush ? (dl < dr && dl <= 1 ? 'start' : dr <= 1 ? 'end' : null) : null;
    if (left) {
      const baseline = flush === 'start' ? 'top' : flush === 'end' ? 'bottom' : 'middle';
      const x = 0.5 - TICK - LABEL_PAD, y = p + 0.5;
      labels.push({ text, x, y, anchor: 'end', baseline, box: labelBox(text, x, y, 'end', baseline, labelSize, em), shown: true });
    } else {
      const anchor = flush ?? 'middle';
      const x = p + 0.5, y = base + TICK + LABEL_PAD;
      labels.push({ text, x, y, anchor, baseline: 'top', box: labelBox(text, x, y, anchor, 'top', labelSize, em), shown: true });
    }
  }
  if (o.labelOverlap) removeOverlaps(labels, o.labelOverlap);
  if (o.labelBound)
    for (const l of labels) {
      const [a, b] = left ? [l.box[1], l.box[3]] : [l.box[0], l.box[2]];
      if (a < lo - 2 || b > hi + 2.5) l.shown = false;
    }
  const shown = labels.filter((l) => l.shown && l.text !== '');

  // how far ticks and labels reach: the title stands beyond them
  let reach = TICK;
  for (const l of labels.filter((x) => x.shown)) reach = Math.max(reach, left ? 0.5 - l.box[0] : l.box[3] - base);
  let svg = `<path d="${tickD}" stroke="${COLOURS.muted}"/>`;
  const groups = new Map<string, Label[]>();
  for (const l of shown) {
    const k = `${l.anchor}|${l.baseline}`;
    if (!groups.has(k)) groups.set(k, []);
    groups.get(k)!.push(l);
  }
  for (const [k, ls] of groups) {
    const [anchor, baseline] = k.split('|') as [Label['anchor'], Label['baseline']];
    const dy = baselineOffset(baseline, labelSize);
    svg += `<g${attrs({ 'font-size': labelSize, 'text-anchor': anchor === 'start' ? undefined : anchor, fill: COLOURS.ink })}>`;
    for (const l of ls) svg += `<text x="${px(l.x)}" y="${px(l.y + dy)}">${escapeXml(l.text)}</text>`;
    svg += '</g>';
  }
  let extent = reach + 0.5;
  if (o.title) {
    // a title may have several lines ("\n"): the last stands nearest the axis on the left, the first on the bottom
    const lines = o.title.split('\n').map(escapeXml);
    const lh = titleSize + 2;
    const extra = (lines.length - 1) * lh;
    const style = attrs({ 'font-size': titleSize, 'text-anchor': 'middle', fill: COLOURS.ink });
    if (left) {
      const y = (lo + hi) / 2 + 0.5;
      lines.forEach((t, n) => {
        const x = -(reach + TITLE_PAD) + 0.5 - (lines.length - 1 - n) * lh;
        svg += `<text transform="translate(${px(x)},${px(y)}) rotate(-90)" y="${baselineOffset('bottom', titleSize)}"${style}>${t}</text>`;
      });
      extent = reach + TITLE_PAD - baselineOffset('bottom', titleSize) + Math.round(0.8 * titleSize) + extra;
    } else {
      const y = base + reach + TITLE_PAD + baselineOffset('top', titleSize);
      lines.forEach((t, n) => (svg += `<text x="${px((lo + hi) / 2 + 0.5)}" y="${px(y + n * lh)}"${style}>${t}</text>`));
      extent = reach + TITLE_PAD + baselineOffset('top', titleSize) - Math.round(0.8 * titleSize) + titleSize + extra;
    }
  }
  return { grid: gridD ? `<path d="${gridD}" stroke="${COLOURS.grid}"/>` : '', svg, extent, ticks };
}
