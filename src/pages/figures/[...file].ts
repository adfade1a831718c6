/**
 * Release-page and quality figures as standalone files: `figures/<group>/<name>.svg`, and the
 * PNG at print resolution beside it when the build could rasterise it.
 */
import type { APIRoute, GetStaticPaths } from 'astro';
import { figure, figureBytes } from '../../site/load.ts';
import { DOWNLOADABLE_FIGURES, pngOf } from '../../lib/charts/figures.ts';

export const getStaticPaths: GetStaticPaths = () => {
  const paths: { params: { file: string } }[] = [];
  for (const f of DOWNLOADABLE_FIGURES) {
    if (!figure(f)) continue;
    paths.push({ params: { file: f } });
    if (figureBytes(pngOf(f))) paths.push({ params: { file: pngOf(f) } });
  }
  return paths;
};

export const GET: APIRoute = ({ params }) => {
  const file = String(params.file);
  if (file.endsWith('.png')) return new Response(new Uint8Array(figureBytes(file) ?? new Uint8Array()), { headers: { 'content-type': 'image/png' } });
  return new Response(`<?xml version="1.0" encoding="UTF-8"?>\n${figure(file) ?? '<svg xmlns="http://www.w3.org/2000/svg"/>'}`, { headers: { 'content-type': 'image/svg+xml' } });
};
