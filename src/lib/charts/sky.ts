/**
 * Sky map of the release from the pipeline's binned cells on a projection chosen for the
 * field's extent. East is to the left, as on the sky.
 */
import type { TopLevelSpec } from 'vega-lite';
import type { SiteContent } from '../pipeline/content.ts';
import { baseConfig, COLOURS, SCHEMA } from './theme.ts';

const r6 = (x: number): number => Math.round(x * 1e6) / 1e6;

export function skySpec(site: Pick<SiteContent, 'sky' | 'title' | 'counts'>, opts: { width?: number } = {}): TopLevelSpec {
  const s = site.sky;
  const h = s.cellSize / 2;
  const values = s.cells.map((c) => ({ x: r6(c.x - h), x2: r6(c.x + h), y: r6(c.y - h), y2: r6(c.y + h), n: c.n }));
  const nMax = Math.max(1, ...s.cells.map((c) => c.n));
  const ex = s.extent;
  const spanX = Math.max(ex.xMax - ex.xMin, 1e-9);
  const spanY = Math.max(ex.yMax - ex.yMin, 1e-9);
  const width = opts.width ?? 420;
  // equal angular scale on both axes
  const height = Math.max(120, Math.min(520, Math.round((width * spanY) / spanX)));
  const tangent = s.projection === 'tangent';
  return {
    $schema: SCHEMA,
    title: { text: 'Sky coverage', subtitle: `${tangent ? 'Tangent-plane' : 'Equal-area'} projection about RA ${s.centre.ra.toFixed(3)}°, Dec ${s.centre.dec.toFixed(3)}°` },
    description: `Map of object density on the sky for ${site.counts.objects} objects, in ${s.cells.length} cells of ${s.cellSize} degrees; darker cells hold more objects (up to ${nMax}). East is to the left.`,
    config: baseConfig(),
    width,
    height,
    data: { values },
    mark: { type: 'rect', color: COLOURS.blue },
    encoding: {
      x: { field: 'x', type: 'quantitative', scale: { domain: [r6(ex.xMax), r6(ex.xMin)], nice: false, zero: false }, axis: { title: tangent ? 'Offset east (deg)' : 'x (deg), east to the left', grid: true, tickCount: 5 } },
      x2: { field: 'x2' },
      y: { field: 'y', type: 'quantitative', scale: { domain: [r6(ex.yMin), r6(ex.yMax)], nice: false, zero: false }, axis: { title: tangent ? 'Offset north (deg)' : 'y (deg)', grid: true, tickCount: 5 } },
      y2: { field: 'y2' },
      opacity: { field: 'n', type: 'quantitative', scale: { type: 'sqrt', domain: [0, nMax], range: [0.15, 1] }, legend: { title: 'Objects per cell', orient: 'bottom', direction: 'horizontal', gradientLength: 140 } },
    },
  } as unknown as TopLevelSpec;
}
