/**
 * The posterior matrix drawn from content whose geometry is known: two parameters on
 * [0, 10] (plotted range [-0.6, 10.6], the 6% padding of `domainOf`), 150-px panels, an
 * asymmetric credible region per level, a true value and a correlation. The drawn outlines,
 * markers and numbers must sit where the scales put them (closed-form pixel positions), so a
 * swapped axis, a swapped level or a shifted panel fails.
 */
import { describe, expect, it } from 'vitest';
import type { ObjectContent, ParamRow } from '../../src/lib/pipeline/content.ts';
import { posteriorSvg } from '../../src/lib/charts/posterior.ts';

const row = (name: string, truth: number): ParamRow => ({
  name,
  label: name,
  unit: '',
  mean: 5,
  std: 1,
  p025: 1,
  p16: 4,
  p50: 5,
  p84: 6,
  p975: 9,
  median: 5,
  lo: 4,
  hi: 6,
  hdi68: [4, 6],
  hdi95: [1, 9],
  truth,
  multimodal: false,
});

const edges = Array.from({ length: 11 }, (_, i) => i);
const marginal = (param: string) => ({ param, edges, density: [0, 0.05, 0.1, 0.15, 0.2, 0.2, 0.15, 0.1, 0.05, 0], kdeX: edges, kdeY: [0, 0.05, 0.1, 0.15, 0.2, 0.25, 0.2, 0.15, 0.1, 0.05, 0], rule: 'test' });

/** The 68% region is the rectangle a in [3, 7], b in [4, 5]; the 95% one a in [2, 8], b in [2, 8]. Given with x = b, y = a, so the drawing must swap it. */
const rect = (a0: number, a1: number, b0: number, b1: number): [number, number][] => [[b0, a0], [b0, a1], [b1, a1], [b1, a0], [b0, a0]];
const obj = {
  id: 'TEST-1',
  params: [row('a', 5), row('b', 7)],
  marginals: [marginal('a'), marginal('b')],
  contours: [{ x: 'b', y: 'a', levels: [{ mass: 0.68, paths: [rect(3, 7, 4, 5)] }, { mass: 0.95, paths: [rect(2, 8, 2, 8)] }], points: [] }],
  correlation: [[1, -0.4], [-0.4, 1]],
} as unknown as ObjectContent;

const CELL = 150;
const px = (v: number) => ((v + 0.6) / 11.2) * CELL;
const py = (v: number) => CELL - px(v);

/** Absolute vertices of compact path data (M, l with implicit repeats, h, v, V, z). */
function vertices(d: string): [number, number][][] {
  const out: [number, number][][] = [];
  const tokens = d.match(/[MlhvVzZ]|-?(?:\d+\.?\d*|\.\d+)/g) ?? [];
  let cmd = '';
  let x = 0, y = 0;
  let cur: [number, number][] = [];
  for (let i = 0; i < tokens.length; ) {
    const t = tokens[i];
    if (/[A-Za-z]/.test(t)) {
      cmd = t;
      i++;
      if (cmd === 'z' || cmd === 'Z') {
        out.push(cur);
        cur = [];
      }
      continue;
    }
    const n = (k: number) => Number(tokens[i + k]);
    if (cmd === 'M') {
      if (cur.length) out.push(cur);
      x = n(0);
      y = n(1);
      cur = [[x, y]];
      cmd = 'l';
      i += 2;
    } else if (cmd === 'l') {
      x += n(0);
      y += n(1);
      cur.push([x, y]);
      i += 2;
    } else if (cmd === 'h') {
      x += n(0);
      cur.push([x, y]);
      i++;
    } else if (cmd === 'v') {
      y += n(0);
      cur.push([x, y]);
      i++;
    } else if (cmd === 'V') {
      y = n(0);
      cur.push([x, y]);
      i++;
    } else i++;
  }
  if (cur.length) out.push(cur);
  return out;
}

const svg = posteriorSvg(obj);
/** The matrix itself (after the title and the legend, whose glyphs share its styles). */
const matrix = svg.slice(svg.lastIndexOf('<g transform="translate(', svg.indexOf('M0.5,0.5h150v150h-150z')));
const pathWith = (style: string) => {
  const all = [...matrix.matchAll(new RegExp(`<path d="([^"]+)" ${style}`, 'g'))];
  if (!all.length) throw new Error(`no path with ${style}`);
  return all.flatMap((m) => vertices(m[1]));
};

describe('posterior matrix geometry', () => {
  it('has 150-px panels in a 2 x 2 grid: two diagonal panels, the pair below, the correlation above', () => {
    expect(matrix).toContain('M0.5,0.5h150v150h-150zM0.5,156.5h150v150h-150zM156.5,156.5h150v150h-150z');
    expect(matrix).toMatch(/<path d="M156\.5,0?\.5h150v150h-150z" fill="#d55e00"/);
  });

  it('shades each credible region where the scales put it, with the axes the right way round', () => {
    // the pair panel is row 1, column 0: x = a, y = b, offset (0, 156)
    const inner = pathWith('fill="#0072b2" fill-opacity="0.42" fill-rule="evenodd"')[0];
    const outer = pathWith('fill="#0072b2" fill-opacity="0.22" fill-rule="evenodd"')[0];
    const expected = (a0: number, a1: number, b0: number, b1: number) => [[px(a0), 156 + py(b0)], [px(a1), 156 + py(b0)], [px(a1), 156 + py(b1)], [px(a0), 156 + py(b1)]];
    const near = (got: [number, number][], want: number[][]) => {
      for (const w of want) expect(got.some((g) => Math.abs(g[0] - w[0]) <= 0.06 && Math.abs(g[1] - w[1]) <= 0.06), `vertex ${w}`).toBe(true);
    };
    near(inner, expected(3, 7, 4, 5));
    near(outer, expected(2, 8, 2, 8));
  });

  it('marks the true value by a diamond centred on it in the pair panel and on each diagonal axis', () => {
    const diamonds = pathWith('fill="#ffffff" stroke="#1a1a1a"').map((v) => [v[0][0], v[0][1] + 4]);
    // diagonal a (0, 0): truth a = 5 at 5 px above the axis; diagonal b (156, 156): truth b = 7; pair: (a, b) = (5, 7)
    const want = [[px(5), CELL - 5], [156 + px(7), 156 + CELL - 5], [px(5), 156 + py(7)]];
    for (const w of want) expect(diamonds.some((d) => Math.abs(d[0] - w[0]) <= 0.06 && Math.abs(d[1] - w[1]) <= 0.06), `diamond at ${w}`).toBe(true);
  });

  it('draws the median from the axis to the density curve, and shades the central intervals under it', () => {
    const medians = pathWith('stroke="#1a1a1a" stroke-width="1.2"');
    // the density curve is 0.25 at a = 5, the top of the plotted density range 1.3 x 0.25
    const top = CELL - (0.25 / (1.3 * 0.25)) * CELL;
    expect(medians.some((m) => Math.abs(m[0][0] - px(5)) <= 0.06 && m[0][1] === CELL && Math.abs(m[1][1] - top) <= 0.06)).toBe(true);
    const band68 = pathWith('fill="#0072b2" fill-opacity="0.42"/>')[0];
    const xs = band68.map((v) => v[0]);
    expect(Math.min(...xs)).toBeCloseTo(px(4), 1);
    expect(Math.max(...xs)).toBeCloseTo(px(6), 1);
  });

  it('writes the correlation above the diagonal, tinted by its sign', () => {
    expect(svg).toContain('ρ −0.40');
    expect(svg).toMatch(/fill="#d55e00" fill-opacity="0?\.2"/); // 0.04 + 0.4 x |rho|
  });
});
