/** Viewer mode: the slug lookup and the object shards the viewer page loads (see src/site/viewer-data.ts). */
import type { APIRoute } from 'astro';
import { viewerFile, viewerFiles } from '../../../site/viewer-data.ts';

export function getStaticPaths() {
  return viewerFiles().map((file) => ({ params: { file } }));
}

export const GET: APIRoute = ({ params }) => {
  const bytes = viewerFile(String(params.file));
  if (!bytes) return new Response('not found', { status: 404 });
  return new Response(bytes as unknown as BodyInit, { headers: { 'content-type': 'application/json' } });
};
