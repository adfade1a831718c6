/** The relation's linked view as a compiled Vega spec with its points, fetched by the page's script. */
import type { APIRoute } from 'astro';
import { loadRelation, loadSite } from '../../../site/load.ts';
import { relationPointsVega } from '../../../lib/charts/relation.ts';
import { slugOf } from '../../../lib/core/slug.ts';

export function getStaticPaths() {
  return loadSite()
    .relations.filter((r) => (loadRelation(r.name)?.points.length ?? 0) > 0)
    .map((r) => ({ params: { name: slugOf(r.name) }, props: { relName: r.name } }));
}

export const GET: APIRoute = ({ props }) => {
  const rel = loadRelation((props as { relName: string }).relName);
  return new Response(JSON.stringify(rel ? relationPointsVega(rel) : {}), { headers: { 'content-type': 'application/json' } });
};
