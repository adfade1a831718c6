/** The stellar mass function figure as a standalone SVG download. */
import type { APIRoute } from 'astro';
import { figure } from '../site/load.ts';
import { FIGURES } from '../lib/charts/figures.ts';

export const GET: APIRoute = () => new Response(`<?xml version="1.0" encoding="UTF-8"?>\n${figure(FIGURES.massFunction) ?? '<svg xmlns="http://www.w3.org/2000/svg"/>'}`, { headers: { 'content-type': 'image/svg+xml' } });
