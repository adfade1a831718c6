/**
 * The demo's `release.json`: metadata, the column mapping of its tables, the parameters with
 * their interim priors, the relations to derive, quality thresholds, and a Markdown
 * description that states every number the scenario was drawn from.
 */
import type { ReleaseConfig } from '../../src/lib/bundle/schema.ts';
import type { DemoTruth } from './generate.ts';
import { FLAW, SSFR_PRIOR, type ParamSpec } from './params.ts';
import { MULTIMODAL, SKEW } from './posterior.ts';
import { BANDS, SELECTION_BAND } from './sed.ts';
import { CALIBRATION_FLOOR, DOF_SUBTRACT, LIMIT_BELOW_NSIGMA, LIMIT_NSIGMA, POOR_FIT_FRACTION, SPECTRUM } from './observe.ts';
import { FIELD, MAG_LIMIT, PARENT_DEPTH_DEX, Z_BINS, Z_MAX, Z_MIN } from './scenario.ts';

/** Our column names to the names in the demo's files (the fitter's own spelling). */
export const COLUMN_MAPS = {
  objects: { ra: 'RA_DEG', dec: 'DEC_DEG', redshift: 'Z_FIT', mag: 'mag_heron' },
  samples: { weight: 'w_imp' },
  photometry: { flux: 'f_uJy', flux_err: 'e_uJy' },
  bands: { wavelength: 'pivot_um' },
  spectra: {} as Record<string, string>,
  models: { flux: 'fnu_uJy' },
} as const;

export const QUALITY = {
  minEss: 50,
  minChi2Pvalue: 0.001,
  dofSubtract: DOF_SUBTRACT,
  priorEdgeWidth: 0.02,
  priorEdgeMass: 0.2,
  multimodalMinMass: 0.1,
  outlierTension: 3,
} as const;

export const SSFR_THRESHOLD = -10.3;
export const RELEASE_DATE = '2026-12-01';
export const VERSION = '1.0.0';

const f = (x: number, d = 2) => (x < 0 ? `−${(-x).toFixed(d)}` : x.toFixed(d));
const sgn = (x: number, d = 2) => (x < 0 ? `− ${(-x).toFixed(d)}` : `+ ${x.toFixed(d)}`);

export function buildRelease(t: DemoTruth, params: ParamSpec[]): ReleaseConfig {
  const title = `${FIELD.name} stellar-population catalogue, Data Release 1`;
  return {
    title,
    version: VERSION,
    releaseDate: RELEASE_DATE,
    description: describe(t, params),
    citation: {
      text: `${FIELD.name} Collaboration (2026), "${title}", version ${VERSION}. A mock catalogue: every galaxy in it was drawn from the relations stated in this description.`,
      bibtex: [
        '@misc{vdf_dr1_2026,',
        `  author = {{${FIELD.name} Collaboration}},`,
        `  title = {{${title}}},`,
        '  year = {2026},',
        '  month = dec,',
        `  version = {${VERSION}},`,
        '  note = {Mock data release generated from stated population relations}',
        '}',
      ].join('\n'),
    },
    licence: 'CC-BY-4.0',
    authors: [{ name: `${FIELD.name} Collaboration` }],
    changelog: [
      { version: '0.9.0', date: '2026-06-15', notes: 'Internal preview to the collaboration: objects, samples and photometry only.' },
      { version: VERSION, date: RELEASE_DATE, notes: 'First public release: adds spectra for a tenth of the objects, model SEDs, the dust-mass relation, and corrected photometric errors in the shallow field corners.' },
    ],
    survey: { name: FIELD.name, areaDeg2: t.areaDeg2, magLimit: MAG_LIMIT, magBand: SELECTION_BAND },
    cosmology: { H0: t.cosmology.H0, Om0: t.cosmology.Om0 },
    units: { flux: 'uJy', wavelength: 'um' },
    model: {
      imf: 'Chabrier',
      sfh: 'delayed exponential',
      dust: 'Calzetti et al. (2000) attenuation curve, R_V = 4.05',
      sfrTimescaleMyr: 100,
      notes: 'Posteriors are simulated (see the description); the model SEDs are an analytic toy spectrum, not a population-synthesis library.',
    },
    tables: {
      objects: { path: 'objects.csv', columns: { ...COLUMN_MAPS.objects } },
      samples: { path: 'samples.arrow', columns: { ...COLUMN_MAPS.samples } },
      photometry: { path: 'photometry.csv', columns: { ...COLUMN_MAPS.photometry } },
      bands: { path: 'bands.csv', columns: { ...COLUMN_MAPS.bands } },
      spectra: { path: 'spectra.csv', columns: { ...COLUMN_MAPS.spectra } },
      models: { path: 'models.arrow', columns: { ...COLUMN_MAPS.models } },
    },
    parameters: params.map((p) => ({
      name: p.name,
      ...(p.column ? { column: p.column } : {}),
      label: p.label,
      unit: p.unit,
      description: p.description,
      ...(p.ucd ? { ucd: p.ucd } : {}),
      role: p.role,
      prior: { kind: 'uniform' as const, min: p.min, max: p.max },
    })),
    relations: [
      {
        name: 'main_sequence',
        title: 'Star-forming main sequence',
        x: 'log_mstar',
        y: 'log_sfr',
        population: 'star-forming',
        zBins: Z_BINS.slice(),
        pivot: 10,
        methods: ['deconvolved', 'hierarchical', 'mixture', 'running-median', 'naive'],
        reference: 'speagle2014',
        aboveCompleteness: true,
        redshiftTerm: false,
      },
      {
        name: 'dust_mass',
        title: 'Dust attenuation versus stellar mass',
        x: 'log_mstar',
        y: 'av',
        population: 'star-forming',
        zBins: Z_BINS.slice(),
        pivot: 10,
        methods: ['deconvolved', 'running-median', 'naive'],
        aboveCompleteness: true,
        redshiftTerm: false,
      },
    ],
    populations: { kind: 'ssfr', threshold: SSFR_THRESHOLD },
    quality: { ...QUALITY },
    site: { objectPageLimit: 50000, shardSize: 50 },
    seed: t.seed,
  };
}

function describe(t: DemoTruth, params: ParamSpec[]): string {
  const h = t.hyper;
  const ms = h.mainSequence;
  const c = t.counts;
  const L: string[] = [];
  L.push(
    `**This is a mock catalogue.** The ${FIELD.name} (${FIELD.short}) does not exist: every galaxy below was drawn from the relations stated here (seed ${t.seed}), ` +
      'and the true value of every parameter is published next to its posterior (`<param>_true` columns of the objects table), so the release doubles as a calibration test. ' +
      `One flaw has been planted on purpose: the **${FLAW.parameter}** posteriors are too narrow by a factor ${FLAW.factor} (see *The fit*).`,
  );
  L.push('', '## Field and selection', '');
  L.push(`- Centre RA ${f(FIELD.raDeg, 2)}°, Dec +${f(FIELD.decDeg, 2)}° (ICRS); a box ${f(t.field.raWidthDeg, 4)}° wide in RA and ${f(t.field.decWidthDeg, 4)}° in Dec, **${t.areaDeg2} deg²** (${t.solidAngleSr.toExponential(4)} sr).`);
  L.push(`- Cosmology: flat ΛCDM, H0 = ${t.cosmology.H0} km/s/Mpc, Ωm = ${t.cosmology.Om0}. Comoving volume ${Z_MIN} < z < ${Z_MAX} over the field: ${t.volumeMpc3.toExponential(4)} Mpc³.`);
  L.push(`- Redshifts ${Z_MIN} < z < ${Z_MAX}; redshifts are known exactly (the fit does not vary them).`);
  L.push(`- Selection: total AB magnitude in the **${SELECTION_BAND}** band (1.55 μm) brighter than **${MAG_LIMIT.toFixed(1)}**. ${c.parents} galaxies were drawn before the cut (down to ${PARENT_DEPTH_DEX} dex below the star-forming mass limit at each redshift, and never below log M = 6.0); **${c.objects}** passed it.`);
  L.push(`- Every galaxy is fitted with the Chabrier (2003) IMF.`);
  L.push('', '## Population', '');
  L.push(`- **Stellar mass function** (Schechter 1976, per dex): φ(log M) = ln(10) φ*(z) (M/M*)^(α+1) exp(−M/M*), with log M* = ${f(h.smf.logMstar)}, α = ${f(h.smf.alpha)}, and log φ*(z) = ${f(h.smf.logPhiStar0)} ${sgn(h.smf.dLogPhiStarDz)} z (Mpc⁻³ dex⁻¹). Redshifts follow dV/dz times the number density.`);
  L.push(`- **Quiescent fraction**: f_q = F(z) + (1 − F(z)) / (1 + exp(−(log M − (${f(h.quiescentFraction.logMq0)} ${sgn(h.quiescentFraction.dLogMqDz)} z)) / ${f(h.quiescentFraction.width)})), with F(z) = ${f(h.quiescentFraction.floor0)} exp(−z / ${f(h.quiescentFraction.floorZScale, 1)}) for quenched dwarfs. ${t.planted.quiescent} of the ${c.objects} catalogue galaxies are quiescent (column \`population_true\`).`);
  L.push(`- **Mass-to-light relation** (selection magnitude): m = DM(z) − 2.5 log10(1+z) ${sgn(h.massToLight.m10)} ${sgn(h.massToLight.dMdz)} z − 2.5 (log M − 10) + ${f(h.massToLight.quiescentOffset)} [quiescent], with a Gaussian scatter of ${f(h.massToLight.scatter)} mag; DM is the distance modulus.`);
  L.push(`- **Main sequence** (star-forming): log SFR = a(z) + b (log M − 10) + N(0, s), with a(z) = ${f(ms.a0)} − ${f(ms.aT, 3)} t(z), t(z) the age of the universe in Gyr (the shape of Speagle et al. 2014, our own numbers), b = ${f(ms.b)}, s = ${f(ms.scatter)} dex.`);
  L.push(`- Quiescent galaxies sit ${f(-ms.quiescentOffset)} dex below the main sequence with a scatter of ${f(ms.quiescentScatter)} dex. The release calls a galaxy quiescent when its log sSFR is below ${f(SSFR_THRESHOLD, 1)}; with these numbers that cut separates the two populations at every redshift, except for quenched dwarfs, which lie close to it.`);
  L.push(`- **Dust**: star-forming A_V = ${f(h.dust.c)} + ${f(h.dust.d)} (log M − 10) + N(0, ${f(h.dust.scatter)}) mag, truncated at zero, which biases it high below log M ≈ ${f(10 + (2 * h.dust.scatter - h.dust.c) / h.dust.d, 1)} (where the mean falls below two scatters); quiescent A_V = |N(0, ${f(h.dust.quiescentSigma)})|.`);
  L.push(`- **Age** (time since the onset of star formation, tied to the formation epoch): age = f t_H(z) with t_H the age of the universe; star-forming log f ~ N(${f(h.age.sfLogFrac)} + ${f(h.age.sfLogFracSlope)} (log M − 10), ${f(h.age.sfLogFracScatter)}), f ≤ 0.9; quiescent f uniform in [${h.age.qFracMin}, ${h.age.qFracMax}]; never younger than 50 Myr.`);
  if (params.length > 4) {
    const m = h.metallicity;
    L.push(`- Metallicity log Z/Z☉ = ${f(m.z0)} + ${f(m.slope)} (log M − 10) ${sgn(m.dz)} z + N(0, ${f(m.scatter)}); log τ uniform in [9.0, 10.3] (star-forming) or [8.0, 9.0] (quiescent); attenuation slope δ ~ N(−0.10, 0.15); log U ~ N(−2.6 + 0.25 z, 0.3) (star-forming) or N(−3.3, 0.3).`);
  }
  L.push('', 'Truth of the relations per redshift bin (a at the bin centre; the mass limit is the star-forming one at the far edge of the bin):', '');
  L.push('| z bin | main sequence a(z) | b | s | dust c | d | scatter | log M limit |', '| --- | --- | --- | --- | --- | --- | --- | --- |');
  t.relations.main_sequence.bins.forEach((b, i) => {
    const dm = t.relations.dust_mass.bins[i];
    L.push(`| ${b.zLo}–${b.zHi} | ${f(b.a, 3)} | ${f(b.b)} | ${f(b.scatter)} | ${f(dm.a)} | ${f(dm.b)} | ${f(dm.scatter)} | ${f(b.logMassLimit)} |`);
  });
  L.push('', '## The fit', '');
  L.push('| parameter | unit | interim prior | σ₀ |', '| --- | --- | --- | --- |');
  for (const p of params) L.push(`| \`${p.name}\`${p.column ? ` (column \`${p.column}\`)` : ''} | ${p.unit || '—'} | uniform [${p.min}, ${p.max}] | ${p.sigma0} |`);
  L.push('');
  L.push(`- **Interim prior**: the uniform box above times a Gaussian in log sSFR = log SFR − log M with mean ${SSFR_PRIOR.mean} and σ = ${SSFR_PRIOR.sigma} dex, normalised over the box. It is not flat and does not factorise in (log M, log SFR); its log density at every draw is the \`log_prior\` column of the samples.`);
  L.push(`- **Errors**: each galaxy's "observed" values are its true values plus a correlated error (mass–SFR ${0.45}, SFR–A_V ${0.55}, mass–age ${0.4}, SFR–age −${0.3}), with widths σ = σ₀ (1 + 0.25 z) 10^(0.12 max(0, m − 23)) × 10^N(0, 0.08), capped at a quarter of the prior range. Where the scale factor exceeds ${SKEW.threshold} (faint or distant galaxies) the SFR error is skew-normal (shape ${SKEW.alpha}), so those posteriors have a tail towards low SFR.`);
  L.push(`- **Posteriors** are likelihood × interim prior, represented by ${t.options.drawsRange[0]}–${t.options.drawsRange[1]} importance-sampling draws per galaxy from a Gaussian proposal wider than the likelihood; the weights (column \`w_imp\`, scaled to a maximum of 1 per galaxy) are posterior / proposal. Kish effective sample sizes range from ${f(t.ess.min, 0)} to ${f(t.ess.max, 0)} (median ${f(t.ess.median, 0)}); ${t.ess.below50} galaxies have fewer than ${QUALITY.minEss}.`);
  L.push(`- ${f(100 * MULTIMODAL.fraction, 0)}% of the galaxies were drawn with a second, aliased solution in log SFR, ${f(MULTIMODAL.minSeparation, 1)}–${f(MULTIMODAL.minSeparation + MULTIMODAL.separationRange, 1)} dex (and at least four σ) away, holding ${f(MULTIMODAL.minWeight)}–${f(MULTIMODAL.minWeight + MULTIMODAL.weightRange)} of the likelihood; ${t.planted.multimodal.length} kept it (the rest would have put it outside the prior).`);
  L.push(`- Low-dust galaxies pile up at the A_V = 0 bound of the prior (${t.planted.priorEdge.av?.length ?? 0} galaxies hold more than ${QUALITY.priorEdgeMass} of their posterior within ${QUALITY.priorEdgeWidth} of the range of a bound).`);
  L.push(`- **Planted flaw**: the fit's ${FLAW.parameter} likelihood is ${FLAW.factor} times too narrow, so every ${FLAW.parameter} posterior is shrunk about its centre by that factor. Its central 68.3% intervals hold the truth only about ${(100 * t.flaw.expectedCoverage68).toFixed(0)}% of the time (2Φ(1/${FLAW.factor}) − 1), against 68% for the other parameters (slightly less where the interim prior pulls).`);
  L.push(`- **χ²**: for good fits the χ² is drawn from a chi-square distribution with n_bands − ${DOF_SUBTRACT} degrees of freedom and built into the photometric residuals; ${f(100 * POOR_FIT_FRACTION, 0)}% of the galaxies (${t.planted.poorFit.length}) have one or two bands 6–12σ off the model.`);
  L.push('', '## Photometry', '');
  L.push(`Twelve bands; fluxes in μJy; the error is the background term (5σ depth / 5, up to 35% larger towards the field corners) and a ${f(100 * CALIBRATION_FLOOR, 0)}% calibration floor in quadrature. Not every band covers the whole field.`, '');
  L.push('| band | pivot (μm) | width (μm) | 5σ depth (AB) | coverage | non-detections |', '| --- | --- | --- | --- | --- | --- |');
  for (const b of BANDS) L.push(`| ${b.band} | ${b.wavelength} | ${b.width} | ${b.depth5} | ${b.footprint} | ${b.forced ? 'forced: kept as measurements, may be negative' : `upper limit below ${LIMIT_BELOW_NSIGMA}σ`} |`);
  L.push('', `Upper limits are flagged \`upper_limit\` with \`limit_nsigma\` = ${LIMIT_NSIGMA} (the limit is ${LIMIT_NSIGMA} × the flux error); their measured flux is kept. \`model_flux\` is the best-fit model in the band.`);
  L.push('', '## Spectra and models', '');
  L.push(`- ${c.spectraObjects} galaxies (brighter ones preferred) have a spectrum from the **${SPECTRUM.instrument}** multi-object spectrograph: ${SPECTRUM.pixels} pixels from ${SPECTRUM.lo.toFixed(2)} to ${SPECTRUM.hi.toFixed(2)} μm, ${SPECTRUM.sigma} μJy per pixel away from sky lines, the telluric band ${SPECTRUM.telluric[0]}–${SPECTRUM.telluric[1]} μm and ${SPECTRUM.badPixels} bad pixels per spectrum masked.`);
  L.push(`- The best-fit model SED of every galaxy is given at 200 log-spaced observed-frame wavelengths from 0.3 to 10 μm, in μJy: an analytic toy spectrum (age-dependent blue slope and 4000 Å break, emission bumps scaled with sSFR, Calzetti et al. 2000 attenuation), normalised to the selection magnitude.`);
  L.push('', '## Columns', '');
  L.push('Files keep the fitter\'s own column names; `release.json` maps them: objects `RA_DEG`, `DEC_DEG`, `Z_FIT`, `mag_heron`; samples `w_imp` (weight) and `lg_age_yr` (log_age); photometry `f_uJy`, `e_uJy`; bands `pivot_um`; models `fnu_uJy`. One object id, `' + t.planted.specialIds[0] + '`, contains characters that need escaping in URLs.');
  return L.join('\n');
}
