/**
 * Server-side rendering of a Vega-Lite spec (the site-level figures) to a compact,
 * deterministic SVG string: vega-lite compile, then a headless Vega View (renderer 'none'),
 * then `toSVG`, then a clean-up pass that removes what varies between runs or only costs bytes.
 *
 * What the clean-up does, and why:
 * - clip-path and gradient ids come from a process-wide counter in Vega, so the same chart
 *   gets different ids depending on what was rendered before; they are renamed in order of
 *   appearance with a prefix taken from the SVG's own content (several figures can share a page).
 * - coordinates are rounded to 2 decimals (a hundredth of a pixel) in geometry attributes.
 * - empty background/foreground paths and per-mark ARIA attributes are dropped; the root gets
 *   `role="img"`, a `<title>` and `<desc>` from the spec's title and description instead.
 */
import { createHash } from 'node:crypto';
import { compile, type TopLevelSpec } from 'vega-lite';
import { parse, View, version as vegaVersion } from 'vega';

/** Bump when the clean-up below changes, so cached figures are rendered again. */
export const RENDER_VERSION = `posterity-svg-2;vega-${vegaVersion}`;

export interface RenderOptions {
  /** Prefix for ids inside the SVG; defaults to one derived from the SVG content. */
  idPrefix?: string;
}

/** Stable hash of a spec (and the renderer version), for the figure cache. */
export function specHash(spec: unknown): string {
  return createHash('sha256').update(RENDER_VERSION).update('\0').update(stableStringify(spec)).digest('hex').slice(0, 24);
}

/** JSON with object keys in sorted order, so equal specs hash equally. */
export function stableStringify(v: unknown): string {
  if (v === null || typeof v !== 'object') return JSON.stringify(v) ?? 'null';
  if (Array.isArray(v)) return '[' + v.map(stableStringify).join(',') + ']';
  const keys = Object.keys(v as Record<string, unknown>).filter((k) => (v as Record<string, unknown>)[k] !== undefined).sort();
  return '{' + keys.map((k) => JSON.stringify(k) + ':' + stableStringify((v as Record<string, unknown>)[k])).join(',') + '}';
}

function escapeXml(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

function textOf(t: unknown): string {
  if (typeof t === 'string') return t;
  if (Array.isArray(t)) return t.join(' ');
  if (t && typeof t === 'object' && 'text' in t) return textOf((t as { text: unknown }).text);
  return '';
}

const GEOMETRY_ATTRS = /\s(d|transform|x|y|x1|x2|y1|y2|width|height|cx|cy|r|points|viewBox)="([^"]*)"/g;

function roundNumbers(value: string): string {
  return value.replace(/-?\d+\.\d{3,}(?:e-?\d+)?/g, (m) => {
    const r = Math.round(Number(m) * 100) / 100;
    return Object.is(r, -0) ? '0' : String(r);
  });
}

/** The clean-up pass on Vega's SVG output (exported for tests). */
export function cleanSvg(svg: string, meta: { title?: string; description?: string }, idPrefix?: string): string {
  let s = svg;
  // empty decoration paths Vega emits for every group
  s = s.replace(/<path class="background" aria-hidden="true" d="M0,0h0v0h0Z"( pointer-events="none")?\/>/g, '');
  s = s.replace(/<path class="foreground" aria-hidden="true" d=""( pointer-events="none")? display="none"\/>/g, '');
  // per-mark ARIA: the figure as a whole is described on the root instead
  s = s.replace(/ (aria-label|aria-roledescription|role|aria-hidden)="[^"]*"/g, '');
  s = s.replace(/ pointer-events="none"/g, '');
  s = s.replace(GEOMETRY_ATTRS, (_m, name: string, value: string) => ` ${name}="${roundNumbers(value)}"`);
  // deterministic ids
  const idFree = s.replace(/ id="[^"]+"|url\(#[^)]+\)|xlink:href="#[^"]+"/g, '');
  const prefix = idPrefix ?? 'f' + createHash('sha256').update(idFree).digest('hex').slice(0, 8);
  const ids = new Map<string, string>();
  s = s.replace(/ id="([^"]+)"/g, (_m, id: string) => {
    if (!ids.has(id)) ids.set(id, `${prefix}-${ids.size + 1}`);
    return ` id="${ids.get(id)}"`;
  });
  s = s.replace(/url\(#([^)]+)\)/g, (m, id: string) => (ids.has(id) ? `url(#${ids.get(id)})` : m));
  s = s.replace(/ xlink:href="#([^"]+)"/g, (m, id: string) => (ids.has(id) ? ` xlink:href="#${ids.get(id)}"` : m));
  // root: drop the xlink namespace when unused, add an accessible name
  if (!/xlink:/.test(s.replace(/^<svg[^>]*>/, ''))) s = s.replace(' xmlns:xlink="http://www.w3.org/1999/xlink"', '');
  const title = meta.title ? `<title>${escapeXml(meta.title)}</title>` : '';
  const desc = meta.description ? `<desc>${escapeXml(meta.description)}</desc>` : '';
  const label = meta.description ?? meta.title;
  s = s.replace(/^<svg([^>]*)>/, (_m, attrs: string) => {
    const a = attrs.replace(' class="marks"', '').replace(' version="1.1"', '');
    return `<svg${a} role="img"${label ? ` aria-label="${escapeXml(label)}"` : ''} class="chart">${title}${desc}`;
  });
  return s;
}

/** Vega-Lite's compile warnings (e.g. merged legends) are not errors of the release. */
interface Logger {
  level(): Logger;
  error(...args: unknown[]): Logger;
  warn(): Logger;
  info(): Logger;
  debug(): Logger;
}
const SILENT: Logger = {
  level(): Logger {
    return SILENT;
  },
  error(...args: unknown[]): Logger {
    throw new Error(`vega-lite: ${args.map(String).join(' ')}`);
  },
  warn(): Logger {
    return SILENT;
  },
  info(): Logger {
    return SILENT;
  },
  debug(): Logger {
    return SILENT;
  },
};

/** Render a Vega-Lite spec to a deterministic SVG string (compiled and parsed afresh: site figures are few). */
export async function renderSvg(vlSpec: TopLevelSpec, opts: RenderOptions = {}): Promise<string> {
  const vg = compile(vlSpec, { logger: SILENT as never }).spec;
  const view = new View(parse(vg), { renderer: 'none', logLevel: 0 });
  try {
    const svg = await view.toSVG();
    const spec = vlSpec as { title?: unknown; description?: string };
    return cleanSvg(svg, { title: textOf(spec.title) || undefined, description: spec.description }, opts.idPrefix);
  } finally {
    view.finalize();
  }
}
