/**
 * What a build shows beside its fits when the bundle is the demo mock: the generator's
 * relations at each redshift bin's centre and its Schechter function (from truth.json).
 */
import { existsSync, readFileSync } from 'node:fs';

interface TruthFile {
  relations?: Record<string, { bins: { a: number; b: number; scatter: number }[] }>;
  hyper?: { smf?: { logPhiStar0: number; dLogPhiStarDz: number; logMstar: number; alpha: number } };
}

export function truthForBuild(file: string): {
  truth?: Record<string, { a: number; b: number; s: number }[]>;
  massFunctionTruth?: (z: number) => { phiStar: number; logMStar: number; alpha: number };
} {
  if (!existsSync(file)) return {};
  const t = JSON.parse(readFileSync(file, 'utf8')) as TruthFile;
  const truth = Object.fromEntries(Object.entries(t.relations ?? {}).map(([name, r]) => [name, r.bins.map((b) => ({ a: b.a, b: b.b, s: b.scatter }))]));
  const smf = t.hyper?.smf;
  return {
    truth,
    massFunctionTruth: smf ? (z) => ({ phiStar: 10 ** (smf.logPhiStar0 + smf.dLogPhiStarDz * z), logMStar: smf.logMstar, alpha: smf.alpha }) : undefined,
  };
}
