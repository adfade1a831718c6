/** The stellar mass function figure as a PNG at print resolution (written by the build when it could rasterise). */
import type { APIRoute } from 'astro';
import { figureBytes } from '../site/load.ts';
import { FIGURES, pngOf } from '../lib/charts/figures.ts';

export const GET: APIRoute = () => new Response(new Uint8Array(figureBytes(pngOf(FIGURES.massFunction)) ?? new Uint8Array()), { headers: { 'content-type': 'image/png' } });
