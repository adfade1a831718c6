/**
 * Astro integration: after the build, rewrite every root-absolute reference in the emitted
 * HTML and CSS (`href="/…"`, `src="/…"`, `url(/…)`, …) to a path relative to the file that
 * holds it, so the site works from any base path and never asks its host's root. Also copies
 * the content folder's `downloads/` into the output. Files are visited in sorted order and
 * rewritten byte-for-byte deterministically.
 */
import { copyFileSync, existsSync, linkSync, mkdirSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { join, relative, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { AstroIntegration } from 'astro';
import { rel } from '../site/paths.ts';

/**
 * Files under `dir`, relative paths with forward slashes, sorted. One array is filled on the
 * way down: spreading a folder's files into its parent's (`push(...files)`) passes each file as
 * an argument and overflows the stack once a folder holds about 10^5 (objects/ of a large site).
 */
export function walk(dir: string, base = dir, out: string[] = []): string[] {
  for (const name of readdirSync(dir).sort()) {
    const full = join(dir, name);
    if (statSync(full).isDirectory()) walk(full, base, out);
    else out.push(relative(base, full).split(sep).join('/'));
  }
  return out;
}

/** The root-absolute URL path of an emitted file (`objects/a/index.html` -> `/objects/a/index.html`). */
function urlPathOf(file: string): string {
  return '/' + file;
}

const ATTR = /(\s(?:href|src|action|poster|data-src|data-href|content))=("|')\/(?!\/)([^"']*)\2/g;
const SRCSET = /(\ssrcset=)("|')([^"']*)\2/g;
const CSS_URL = /url\(\s*("|'|)\/(?!\/)([^"')]*)\1\s*\)/g;
const IMPORT = /((?:import|from)\s*\(?\s*)("|')\/(?!\/)(_astro\/[^"']*)\2/g;

/** Whether a text can hold a root-absolute reference at all (a cheap scan before the regular expressions). */
const MAYBE = /=["']\/(?!\/)|url\(\s*["']?\/(?!\/)|srcset=|["']\/_astro\//;

/**
 * Rewrite root-absolute references in one HTML or CSS text (exported for tests). An HTML page's
 * head (where Astro puts its asset links) is always rewritten; the body only when a scan finds
 * something to rewrite, since pages link relatively and their inline figures are long.
 */
export function relativise(text: string, filePath: string, kind: 'html' | 'css' | 'js'): string {
  if (kind === 'html') {
    const end = text.indexOf('</head>');
    if (end >= 0) {
      const head = text.slice(0, end), body = text.slice(end);
      return rewrite(head, filePath, kind) + (MAYBE.test(body) ? rewrite(body, filePath, kind) : body);
    }
  }
  return rewrite(text, filePath, kind);
}

function rewrite(text: string, filePath: string, kind: 'html' | 'css' | 'js'): string {
  const from = urlPathOf(filePath);
  const to = (p: string) => rel(from, '/' + p);
  let s = text.replace(CSS_URL, (_m, q: string, p: string) => `url(${q}${to(p)}${q})`);
  if (kind === 'html') {
    s = s.replace(ATTR, (m, attr: string, q: string, p: string) => {
      // <meta content="/…"> is only rewritten for refresh-like URLs; other meta values are text
      if (attr.trim() === 'content') return m;
      return `${attr}=${q}${to(p)}${q}`;
    });
    s = s.replace(SRCSET, (_m, attr: string, q: string, v: string) => {
      const parts = v.split(',').map((c) => c.trim().replace(/^\/(?!\/)(\S*)/, (_x, p: string) => to(p)));
      return `${attr}${q}${parts.join(', ')}${q}`;
    });
  }
  if (kind === 'html' || kind === 'js') s = s.replace(IMPORT, (_m, pre: string, q: string, p: string) => `${pre}${q}${to(p)}${q}`);
  return s;
}

/**
 * Copy a folder's files into another: hard links where both are on one file system (a release
 * build stages both side by side, and the downloads of 10^5 objects are hundreds of thousands
 * of files), else copies. The linked files are never written again, so sharing them is safe.
 */
function copyTree(src: string, dst: string): number {
  let n = 0;
  let link = true;
  for (const f of walk(src)) {
    const target = join(dst, ...f.split('/'));
    mkdirSync(join(target, '..'), { recursive: true });
    const from = join(src, ...f.split('/'));
    if (link) {
      try {
        linkSync(from, target);
        n++;
        continue;
      } catch {
        link = false;
      }
    }
    copyFileSync(from, target);
    n++;
  }
  return n;
}

export interface RelativeUrlsOptions {
  /** Folder whose `downloads/` is copied into the output (default: none). */
  contentDir?: string;
}

export default function relativeUrls(opts: RelativeUrlsOptions = {}): AstroIntegration {
  return {
    name: 'posterity-relative-urls',
    hooks: {
      'astro:build:done': ({ dir, logger }) => {
        const out = fileURLToPath(dir);
        let changed = 0;
        for (const f of walk(out)) {
          const kind = f.endsWith('.html') ? 'html' : f.endsWith('.css') ? 'css' : f.endsWith('.js') || f.endsWith('.mjs') ? 'js' : null;
          if (!kind) continue;
          const full = join(out, ...f.split('/'));
          const text = readFileSync(full, 'utf8');
          const next = relativise(text, f, kind);
          if (next !== text) {
            writeFileSync(full, next);
            changed++;
          }
        }
        logger.info(`relative links in ${changed} files`);
        // Astro leaves empty content-layer stubs in the output; they are not part of the site
        for (const stub of ['content-assets.mjs', 'content-modules.mjs']) {
          const f = join(out, stub);
          if (existsSync(f) && readFileSync(f, 'utf8').trim() === 'export default new Map();') rmSync(f);
        }
        if (opts.contentDir) {
          const src = join(opts.contentDir, 'downloads');
          if (existsSync(src)) logger.info(`copied ${copyTree(src, join(out, 'downloads'))} download files`);
        }
      },
    },
  };
}
