/**
 * Published versions do not change: an output folder records the version it holds in its
 * `downloads/release.json`, and a build into that folder is refused (unless asked to replace
 * it) when it would put another version there, or the same version with other bytes.
 */
import { createReadStream, existsSync, readFileSync } from 'node:fs';
import { readdir, stat } from 'node:fs/promises';
import { join, relative } from 'node:path';

/** The version published in a built output folder, or null when the folder holds no release. */
export function publishedVersion(out: string): string | null {
  const file = join(out, 'downloads', 'release.json');
  if (!existsSync(file)) return null;
  try {
    const v = (JSON.parse(readFileSync(file, 'utf8')) as { version?: unknown }).version;
    return typeof v === 'string' ? v : null;
  } catch {
    return null;
  }
}

async function files(dir: string): Promise<string[]> {
  const out: string[] = [];
  const walk = async (d: string) => {
    for (const e of await readdir(d, { withFileTypes: true })) {
      const p = join(d, e.name);
      if (e.isDirectory()) await walk(p);
      else out.push(relative(dir, p).split('\\').join('/'));
    }
  };
  await walk(dir);
  return out.sort();
}

async function sameBytes(a: string, b: string): Promise<boolean> {
  const ra = createReadStream(a, { highWaterMark: 1 << 20 })[Symbol.asyncIterator]();
  const rb = createReadStream(b, { highWaterMark: 1 << 20 })[Symbol.asyncIterator]();
  let bufA: Buffer = Buffer.alloc(0);
  let bufB: Buffer = Buffer.alloc(0);
  let doneA = false;
  let doneB = false;
  try {
    for (;;) {
      if (!bufA.length && !doneA) {
        const r = await ra.next();
        if (r.done) doneA = true;
        else bufA = r.value as Buffer;
      }
      if (!bufB.length && !doneB) {
        const r = await rb.next();
        if (r.done) doneB = true;
        else bufB = r.value as Buffer;
      }
      if (!bufA.length || !bufB.length) return !bufA.length && !bufB.length && doneA && doneB;
      const m = Math.min(bufA.length, bufB.length);
      if (!bufA.subarray(0, m).equals(bufB.subarray(0, m))) return false;
      bufA = bufA.subarray(m);
      bufB = bufB.subarray(m);
    }
  } finally {
    await ra.return?.();
    await rb.return?.();
  }
}

/** Null when the two folders hold the same files with the same bytes, else the first difference in words. */
export async function sameContent(a: string, b: string): Promise<string | null> {
  const fa = await files(a);
  const fb = await files(b);
  const setB = new Set(fb);
  const setA = new Set(fa);
  const onlyA = fa.find((f) => !setB.has(f));
  if (onlyA) return `${onlyA} is new`;
  const onlyB = fb.find((f) => !setA.has(f));
  if (onlyB) return `${onlyB} would be removed`;
  for (const f of fa) {
    const [sa, sb] = [await stat(join(a, f)), await stat(join(b, f))];
    if (sa.size !== sb.size || !(await sameBytes(join(a, f), join(b, f)))) return `${f} differs`;
  }
  return null;
}
