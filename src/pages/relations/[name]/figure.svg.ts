/** The relation's whole figure (every redshift bin) as a standalone SVG download. */
import type { APIRoute } from 'astro';
import { figure, loadSite } from '../../../site/load.ts';
import { FIGURES } from '../../../lib/charts/figures.ts';
import { slugOf } from '../../../lib/core/slug.ts';

export function getStaticPaths() {
  return loadSite()
    .relations.filter((r) => figure(FIGURES.relation(r.name)) !== null)
    .map((r) => ({ params: { name: slugOf(r.name) }, props: { relName: r.name } }));
}

export const GET: APIRoute = ({ props }) => {
  const svg = figure(FIGURES.relation((props as { relName: string }).relName)) ?? '';
  return new Response(`<?xml version="1.0" encoding="UTF-8"?>\n${svg}`, { headers: { 'content-type': 'image/svg+xml' } });
};
