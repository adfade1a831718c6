/**
 * The pieces every figure written straight to SVG shares: the root element with its accessible
 * name, the title, a legend of glyphs, panel frames and clip paths, and groups of marks.
 * Colours come from the theme as literal attribute values (the site's dark theme remaps them).
 */
import { COLOURS } from '../theme.ts';
import { attrs, escapeXml, px, symbolPath, type SymbolShape } from './write.ts';

/** A stable, XML-safe prefix for the ids of one figure (clip paths), from its kind and object id (FNV-1a). */
export function idPrefix(kind: string, id: string): string {
  let h = 0x811c9dc5;
  for (const ch of `${kind}\0${id}`) {
    h ^= ch.codePointAt(0)!;
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  return `${kind}${h.toString(36)}`;
}

/** The figure's root element: size, accessible name, title and description. */
export function svgRoot(width: number, height: number, title: string, description: string, body: string): string {
  return (
    `<svg xmlns="http://www.w3.org/2000/svg" width="${px(width)}" height="${px(height)}" viewBox="0 0 ${px(width)} ${px(height)}" role="img" aria-label="${escapeXml(description || title)}" class="chart" fill="none" font-family="sans-serif">` +
    `<title>${escapeXml(title)}</title>${description ? `<desc>${escapeXml(description)}</desc>` : ''}${body}</svg>`
  );
}

/** Title (13 px) and an optional subtitle (12 px, muted) at the top left; returns the svg and the height used. */
export function titleBlock(title: string, subtitle: string | null): { svg: string; height: number } {
  let svg = `<text x="0" y="10" font-size="13" fill="${COLOURS.ink}">${escapeXml(title)}</text>`;
  if (subtitle) svg += `<text x="0" y="25" font-size="12" fill="${COLOURS.muted}">${escapeXml(subtitle)}</text>`;
  return { svg, height: subtitle ? 28 : 13 };
}

/** A legend entry: a glyph drawn in a 20 x 14 px box with its centre at (10, 7), then the label. */
export interface LegendEntry {
  label: string;
  glyph: string;
}

/**
 * Legend entries in one row (wrapped to further rows past `maxWidth`); returns the svg, its width
 * and height. Labels are spaced by a typical width of sans-serif text (0.62 em a character),
 * with a gap that absorbs wider fonts.
 */
export function legend(entries: LegendEntry[], maxWidth = Infinity): { svg: string; width: number; height: number } {
  let x = 0;
  let y = 0;
  let width = 0;
  let svg = '';
  let text = '';
  for (const e of entries) {
    const w = 24 + Math.ceil(0.62 * 11 * e.label.length);
    if (x > 0 && x + w > maxWidth) {
      x = 0;
      y += 18;
    }
    svg += `<g transform="translate(${x},${y})">${e.glyph}</g>`;
    text += `<text x="${x + 24}" y="${y + 11}">${escapeXml(e.label)}</text>`;
    width = Math.max(width, x + w);
    x += w + 16;
  }
  return { svg: `${svg}<g font-size="11" fill="${COLOURS.ink}">${text}</g>`, width, height: entries.length ? y + 14 : 0 };
}

export type Mark = { shape: SymbolShape; size: number; fill?: string; stroke?: string; strokeWidth?: number; opacity?: number };

/** Symbols of one series: one element each (translucent ones darken where they overlap, as separate marks do). */
export function symbols(points: { x: number; y: number }[], m: Mark): string {
  if (!points.length) return '';
  let s = `<g${attrs({ fill: m.fill, stroke: m.stroke, 'stroke-width': m.strokeWidth, 'fill-opacity': m.opacity !== undefined && m.fill ? m.opacity : undefined, 'stroke-opacity': m.opacity !== undefined && m.stroke ? m.opacity : undefined })}>`;
  for (const p of points) if (Number.isFinite(p.x) && Number.isFinite(p.y)) s += `<path d="${symbolPath(m.shape, p.x, p.y, m.size)}"/>`;
  return s + '</g>';
}

/** Vertical rules (error bars) of one series as one path. */
export function rules(items: { x: number; y1: number; y2: number }[], stroke: string, width: number): string {
  let d = '';
  for (const r of items) if (Number.isFinite(r.x) && Number.isFinite(r.y1) && Number.isFinite(r.y2)) d += `M${px(r.x)},${px(r.y1)}V${px(r.y2)}`;
  return d ? `<path d="${d}"${attrs({ stroke, 'stroke-width': width })}/>` : '';
}

/** The frame of a panel of `w` x `h` px. */
export function panelFrame(w: number, h: number): string {
  return `<path d="M0.5,0.5h${px(w)}v${px(h)}h-${px(w)}Z" stroke="${COLOURS.grid}"/>`;
}

export function clipRect(id: string, w: number, h: number): string {
  return `<clipPath id="${id}"><rect width="${px(w)}" height="${px(h)}"/></clipPath>`;
}
