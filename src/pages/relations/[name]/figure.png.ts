/** The relation's whole figure as a PNG at print resolution, rasterised at build time (when the build could). */
import type { APIRoute } from 'astro';
import { figureBytes, loadSite } from '../../../site/load.ts';
import { FIGURES, pngOf } from '../../../lib/charts/figures.ts';
import { slugOf } from '../../../lib/core/slug.ts';

export function getStaticPaths() {
  return loadSite()
    .relations.filter((r) => figureBytes(pngOf(FIGURES.relation(r.name))) !== null)
    .map((r) => ({ params: { name: slugOf(r.name) }, props: { relName: r.name } }));
}

export const GET: APIRoute = ({ props }) => {
  const png = figureBytes(pngOf(FIGURES.relation((props as { relName: string }).relName)));
  return new Response(png ? new Uint8Array(png) : new Uint8Array(), { headers: { 'content-type': 'image/png' } });
};
