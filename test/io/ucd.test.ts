/**
 * UCD1+ checker against astropy.io.votable.ucd.check_ucd(..., check_controlled_vocabulary=True),
 * using the IVOA word list file shipped with astropy (read in place at test time).
 */
import { readFileSync } from 'node:fs';
import { expect, it } from 'vitest';
import { checkUcd, parseUcdWordList } from '../../src/lib/io/ucd.ts';
import { describeWithPython, hasPython, runPython } from '../helpers/python.ts';

const WORDS_PATH = hasPython(['astropy'])
  ? (runPython("import astropy.io.votable, os\nprint(json.dumps(os.path.join(os.path.dirname(astropy.io.votable.__file__), 'data', 'ucd1p-words.txt')))") as string)
  : '';

/** Hand-picked cases: valid, wrong order, unknown words, syntax errors, case. */
const HAND = [
  'pos.eq.ra;meta.main', 'pos.eq.dec;meta.main', 'phys.mass', 'phot.flux.density;em.opt',
  'meta.id;meta.main', 'src.redshift.phot', 'stat.error;phys.mass', 'meta.main;pos.eq.ra',
  'em.opt', 'phot.mag;em.IR.K', 'POS.EQ.RA;META.MAIN', 'pos.eq.ra;', ';pos.eq.ra', 'pos..eq',
  'pos.eq.ra meta.main', 'ivoa:pos.eq.ra', 'not.a.word', 'phys.mass;phys.mass', '', 'stat.error',
  'phot.color;em.opt.B;em.opt.V', 'pos.pm;pos.eq.ra', 'arith.ratio', 'time.epoch;obs', 'meta.code.qual',
  'meta.number', 'phys.luminosity;em.IR', 'pos.eq.ra.', 'pos.eq.ra;meta.main;', 'phot.mag;stat.mean;em.opt.R',
  'phys.mass;arith.factor', 'arith.factor;phys.mass',
];

/** Deterministic pseudo-random UCDs from the list itself (mulberry32, seed 20250131). */
function randomUcds(words: string[], n: number): string[] {
  let s = 20250131 >>> 0;
  const rand = () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const out: string[] = [];
  for (let i = 0; i < n; i++) {
    const k = 1 + Math.floor(rand() * 3);
    const parts: string[] = [];
    for (let j = 0; j < k; j++) parts.push(words[Math.floor(rand() * words.length)]!);
    out.push(parts.join(';'));
  }
  return out;
}

describeWithPython('UCD1+ checks agree with astropy', ['astropy'], () => {
  it('parses the IVOA word list with its syntax codes', () => {
    const words = parseUcdWordList(readFileSync(WORDS_PATH, 'ascii'));
    expect(words.size).toBeGreaterThan(400);
    expect(words.get('pos.eq.ra')).toBe('Q');
    expect(words.get('meta.main')).toBe('S');
    expect(new Set(words.values())).toEqual(new Set(['P', 'S', 'Q', 'E', 'C', 'V']));
  });

  it('accepts and rejects the same UCDs as check_ucd with the controlled vocabulary', () => {
    const text = readFileSync(WORDS_PATH, 'ascii');
    const words = parseUcdWordList(text);
    // Capitalisation as in the file, so random UCDs keep the list's own spelling.
    const spelled = text.split('\n').filter((l) => l.includes('|')).map((l) => l.split('|')[1]!.trim());
    const cases = [...HAND, ...randomUcds(spelled, 400)];
    const theirs = runPython(
      'from astropy.io.votable.ucd import check_ucd\nprint(json.dumps([check_ucd(u, check_controlled_vocabulary=True) for u in json.load(sys.stdin)]))',
      cases,
    ) as boolean[];
    const ours = cases.map((u) => checkUcd(u, words) === null);
    const disagreements = cases.filter((_, i) => ours[i] !== theirs[i]);
    expect(disagreements).toEqual([]);
    // The cases exercise both outcomes and every rule.
    expect(theirs.filter(Boolean).length).toBeGreaterThan(30);
    expect(theirs.filter((x) => !x).length).toBeGreaterThan(30);
    expect(checkUcd('meta.main;pos.eq.ra', words)).toMatch(/may only be a secondary word/);
    expect(checkUcd('pos.eq.ra;meta.main', words)).toBeNull();
    expect(checkUcd('phys.mass;arith.factor', words)).toMatch(/may only be the primary/);
    expect(checkUcd('not.a.word', words)).toMatch(/unknown word "not.a.word"/);
    expect(checkUcd('pos.eq.ra meta.main', words)).toMatch(/invalid character " "/);
  });
});
