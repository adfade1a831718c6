/** Build the Astro site from a content folder (figures prerendered first), as a release build does. */
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { PROJECT_ROOT } from '../../../src/lib/release/build.ts';
import { prerenderFigures } from '../../../src/lib/charts/prerender.ts';

export async function buildSite(contentDir: string, outDir: string): Promise<void> {
  await prerenderFigures(contentDir, {});
  const r = spawnSync(process.execPath, [join(PROJECT_ROOT, 'node_modules/astro/astro.js'), 'build', '--silent'], {
    cwd: PROJECT_ROOT,
    env: { ...process.env, POSTERITY_CONTENT: contentDir, POSTERITY_OUT: outDir, ASTRO_TELEMETRY_DISABLED: '1' },
    encoding: 'utf8',
  });
  if (r.status !== 0) throw new Error(`astro build failed (exit ${r.status}):\n${r.stdout}\n${r.stderr}`);
}
