// Astro configuration of the Posterity site: a static build that makes no request outside
// itself and works from any base path (every link relative; see src/integrations/relative-urls.ts).
import { resolve } from 'node:path';
import { defineConfig } from 'astro/config';
import relativeUrls from './src/integrations/relative-urls.ts';

process.env.ASTRO_TELEMETRY_DISABLED = '1';

const contentDir = resolve(process.cwd(), process.env.POSTERITY_CONTENT ?? 'content');
const outDir = resolve(process.cwd(), process.env.POSTERITY_OUT ?? 'dist');

export default defineConfig({
  output: 'static',
  outDir,
  trailingSlash: 'always',
  build: { format: 'directory', inlineStylesheets: 'never', assets: '_astro' },
  compressHTML: true,
  prefetch: false,
  devToolbar: { enabled: false },
  integrations: [relativeUrls({ contentDir })],
  vite: {
    logLevel: 'warn',
    build: { assetsInlineLimit: 0, chunkSizeWarningLimit: 2000 },
    server: { fs: { allow: ['.', contentDir] } },
  },
});
