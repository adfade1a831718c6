/**
 * The SED written straight to SVG against recordings of the same figure as the Vega runtime
 * drew it before (test/fixtures/figures/*.svg.gz, recorded from the previous chart code on these
 * objects' content): rendered in Chromium, every panel's plot area must match pixel for pixel up
 * to anti-aliasing, and the figures must carry the same visible text (every tick label, axis
 * title, legend entry and annotation). (The corner plot was checked the same way when it moved
 * to SVG, at 0.05% of pixels at most; it has since been redrawn as the posterior matrix, a new
 * design, which test/charts/posterior.test.ts checks geometrically.)
 *
 * Where the recordings differ on purpose: the old layout placed the residual panel and sized
 * the figure from Vega's bounds of unclipped marks (the gap between the panels ranged from 34
 * to 280 px), and drew an unclipped spectrum error band over neighbouring panels; the new
 * layout is fixed and clips every mark to its panel. So panels are compared where each
 * figure places them, not at one offset.
 */
import { readdirSync, readFileSync, mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { gunzipSync } from 'node:zlib';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import sharp from 'sharp';
import { hasChromium } from '../helpers/chromium.ts';
import { launch, SHOTS } from './helpers/browse.ts';
import { sedModel, sedSvg } from '../../src/lib/charts/sed.ts';
import type { ObjectContent } from '../../src/lib/pipeline/content.ts';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';

const FIXTURES = join(PROJECT_ROOT, 'test', 'fixtures', 'figures');
const gz = (f: string) => gunzipSync(readFileSync(join(FIXTURES, f))).toString('utf8');
const names = readdirSync(FIXTURES).filter((f) => f.endsWith('.json.gz')).map((f) => f.replace(/\.json\.gz$/, ''));
/** A pixel counts as different when a channel differs by more than this (anti-aliasing of equal geometry stays below it). */
const CHANNEL_TOLERANCE = 40;
/** Largest fraction of differing pixels in the plot areas of a figure (measured: at most 0.2% over 1,200 demo figures, the largest where the recording drew a rounded-to-zero flux at the top of the panel). */
const MAX_DIFFERING = 0.004;

type Panel = { x: number; y: number; w: number; h: number };

/** Panels of a recorded Vega figure: the root offset plus each concat group's offset, framed panels only. */
function vegaPanels(svg: string): Panel[] {
  const root = /<g fill="none" stroke-miterlimit="4" transform="translate\(([-\d.]+),([-\d.]+)\)"/.exec(svg)!;
  const tx = Number(root[1]), ty = Number(root[2]);
  const groups = [...svg.matchAll(/concat_(\d+)_group"><g transform="translate\(([-\d.]+),([-\d.]+)\)"><path class="background" d="M0.5,0.5h(\d+)v(\d+)/g)];
  const panels = groups.map((g) => ({ x: tx + Number(g[2]), y: ty + Number(g[3]), w: Number(g[4]), h: Number(g[5]) }));
  return panels.slice(0, 2);
}

/** Panels of a new figure: groups whose first child is a panel frame. */
function newPanels(svg: string): Panel[] {
  const out: Panel[] = [];
  for (const m of svg.matchAll(/<g transform="translate\(([-\d.]+),([-\d.]+)\)"><path d="M0?\.5,0?\.5h([\d.]+)v([\d.]+)/g))
    out.push({ x: Number(m[1]), y: Number(m[2]), w: Number(m[3]), h: Number(m[4]) });
  return out;
}

/** Visible text of a figure, sorted (hidden labels of the recording carry opacity 0). */
function texts(svg: string): string[] {
  return [...svg.replace(/<title>.*?<\/title>|<desc>.*?<\/desc>/g, '').matchAll(/<(text|tspan)([^>]*)>([^<]*)/g)]
    .filter((m) => !/opacity="0"/.test(m[2]))
    .map((m) => m[3])
    .filter((t) => t !== '')
    .sort();
}

describe.runIf(hasChromium())('SED figures against the recorded Vega renderings', () => {
  let browser: Browser;
  let page: Page;
  const report: string[] = [];

  beforeAll(async () => {
    browser = await launch();
    page = await browser.newPage({ viewport: { width: 1000, height: 1000 }, deviceScaleFactor: 1 });
  });
  afterAll(async () => {
    await browser?.close();
    mkdirSync(SHOTS, { recursive: true });
    writeFileSync(join(SHOTS, 'object-figures-vs-recorded.txt'), report.join('\n') + '\n');
  });

  async function pixels(svg: string): Promise<{ data: Buffer; width: number }> {
    await page.setContent(`<!doctype html><html><body style="margin:0;background:#fff">${svg}</body></html>`);
    const png = await page.screenshot({ clip: { x: 0, y: 0, width: 1000, height: 1000 } });
    const { data, info } = await sharp(png).removeAlpha().raw().toBuffer({ resolveWithObject: true });
    return { data, width: info.width };
  }

  for (const name of names) {
    for (const kind of ['sed', 'sed-mag'] as const) {
      const file = `${name}.${kind}.svg.gz`;
      if (!readdirSync(FIXTURES).includes(file)) continue;
      it(`${name} ${kind}: same plot areas and the same text`, async () => {
        const obj = JSON.parse(gz(`${name}.json.gz`)) as ObjectContent;
        const recorded = gz(file);
        const drawn = sedSvg(sedModel(obj, { units: kind === 'sed' ? 'flux' : 'mag' }));
        expect(texts(drawn)).toEqual(texts(recorded));
        const pa = vegaPanels(recorded), pb = newPanels(drawn);
        expect(pb.map((p) => [p.w, p.h])).toEqual(pa.map((p) => [p.w, p.h]));
        const a = await pixels(recorded), b = await pixels(drawn);
        let differing = 0, total = 0;
        pa.forEach((p, k) => {
          const q = pb[k];
          // inside the frame (the frame line itself is shared geometry too, but sits on the half pixel)
          for (let y = 1; y < p.h; y++)
            for (let x = 1; x < p.w; x++) {
              const ia = ((p.y + y) * a.width + p.x + x) * 3, ib = ((q.y + y) * b.width + q.x + x) * 3;
              let d = 0;
              for (let c = 0; c < 3; c++) d = Math.max(d, Math.abs(a.data[ia + c] - b.data[ib + c]));
              total++;
              if (d > CHANNEL_TOLERANCE) differing++;
            }
        });
        const f = differing / total;
        report.push(`${name} ${kind}: ${(100 * f).toFixed(3)}% of ${total} plot-area pixels differ; ${drawn.length} bytes (recorded ${recorded.length})`);
        expect(f).toBeLessThan(MAX_DIFFERING);
        expect(drawn.length).toBeLessThan(recorded.length);
      });
    }
  }
});
