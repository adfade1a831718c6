/**
 * The compact form of object content in the viewer's shards: decoding gives back the same
 * posterior-matrix data to within the stated resolution (1/1000 of each parameter's span), and
 * the same figures; everything else is untouched.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { gunzipSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { decodeObject, encodeObject } from '../../src/lib/pipeline/object-codec.ts';
import { objectFigures } from '../../src/lib/charts/figures.ts';
import type { ObjectContent } from '../../src/lib/pipeline/content.ts';
import { PROJECT_ROOT } from '../../src/lib/release/build.ts';

const fixture = (name: string) => JSON.parse(gunzipSync(readFileSync(join(PROJECT_ROOT, 'test', 'fixtures', 'figures', `${name}.json.gz`))).toString('utf8')) as ObjectContent;

describe('object codec', () => {
  for (const name of ['demo-VDF-000001', 'mini-GAL-0001']) {
    it(`${name}: round trip within 1/1000 of each span, the rest unchanged`, () => {
      const o = fixture(name);
      const back = decodeObject(JSON.parse(JSON.stringify(encodeObject(o))));
      const { marginals, contours, ...rest } = o;
      const { marginals: m2, contours: c2, ...rest2 } = back;
      expect(rest2).toEqual(rest);
      const span = new Map(marginals.map((m) => [m.param, m.edges[m.edges.length - 1] - m.edges[0]]));
      marginals.forEach((m, i) => {
        expect(m2[i].edges.length).toBe(m.edges.length);
        m.edges.forEach((e, k) => expect(Math.abs(m2[i].edges[k] - e)).toBeLessThan(1e-6 * span.get(m.param)! + 1e-9));
        const top = Math.max(...m.density, ...m.kdeY);
        m.density.forEach((d, k) => expect(Math.abs(m2[i].density[k] - d)).toBeLessThanOrEqual(top / 2000 + 1e-12));
        m.kdeY.forEach((d, k) => expect(Math.abs(m2[i].kdeY[k] - d)).toBeLessThanOrEqual(top / 2000 + 1e-12));
      });
      contours.forEach((c, i) => {
        const sx = span.get(c.x)!, sy = span.get(c.y)!;
        c.levels.forEach((lv, l) =>
          lv.paths.forEach((p, j) => {
            expect(c2[i].levels[l].paths[j].length).toBe(p.length);
            p.forEach((pt, k) => {
              const q = c2[i].levels[l].paths[j][k];
              expect(Math.abs(q[0] - pt[0])).toBeLessThanOrEqual(sx / 2000 + 1e-9);
              expect(Math.abs(q[1] - pt[1])).toBeLessThanOrEqual(sy / 2000 + 1e-9);
            });
          }),
        );
      });
    });
  }

  it('draws the same SED and nearly the same posterior matrix from the decoded content, in fewer bytes', () => {
    const o = fixture('demo-VDF-000001');
    const back = decodeObject(JSON.parse(JSON.stringify(encodeObject(o))));
    const a = objectFigures(o), b = objectFigures(back);
    expect(b.sed).toBe(a.sed);
    expect(b.sedMag).toBe(a.sedMag);
    // outlines move by at most a sixth of a pixel, so path data may differ in the last digit only
    expect(Math.abs(b.posterior!.length - a.posterior!.length)).toBeLessThan(a.posterior!.length * 0.02);
    expect(JSON.stringify(encodeObject(o)).length).toBeLessThan(0.75 * JSON.stringify(o).length);
  });
});
