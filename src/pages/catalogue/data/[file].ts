/** The explorer's compact catalogue files (`catalogue/data/manifest.json` and binary chunks), written at build time. */
import type { APIRoute } from 'astro';
import { explorerFile, explorerFiles } from '../../../site/explorer-data.ts';

export function getStaticPaths() {
  return explorerFiles().map((file) => ({ params: { file } }));
}

export const GET: APIRoute = ({ params }) => {
  const bytes = explorerFile(String(params.file));
  if (!bytes) return new Response('not found', { status: 404 });
  const type = String(params.file).endsWith('.json') ? 'application/json' : 'application/octet-stream';
  return new Response(bytes as unknown as BodyInit, { headers: { 'content-type': type } });
};
