/**
 * The zod schema of `release.json`: the single source of truth for the bundle's
 * configuration. TypeScript types are inferred from it (`z.infer`), never written twice.
 */
import { z } from 'zod';

const nonEmpty = z.string().min(1);

/** Map from our column names to the names in the user's file (`{ ours: theirs }`). */
export const ColumnMap = z.record(z.string(), nonEmpty).default({});

export const TableRef = z
  .object({
    /** Path relative to the bundle folder: .csv, .csv.gz, .arrow, .parquet, .fits, .fits.gz */
    path: nonEmpty,
    /** FITS only: HDU index (0 = primary) or EXTNAME; default the first BINTABLE. */
    hdu: z.union([z.number().int().min(0), nonEmpty]).optional(),
    columns: ColumnMap,
  })
  .strict();

export const Prior = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('uniform'), min: z.number(), max: z.number() }).strict(),
  z.object({ kind: z.literal('normal'), mean: z.number(), sigma: z.number().positive() }).strict(),
  /** A prior known only through the per-draw `log_prior` column of the samples table. */
  z.object({ kind: z.literal('column') }).strict(),
]);

export const Parameter = z
  .object({
    /** Our name for the parameter; catalogue columns are `<name>_mean`, `<name>_p16`, ... */
    name: z.string().regex(/^[a-z][a-z0-9_]*$/, 'lower-case letters, digits and _ , starting with a letter'),
    /** Column in the samples table (default: the name). */
    column: nonEmpty.optional(),
    label: nonEmpty,
    /**
     * Unit of the values, as free text: `solMass`, `mag`, `Gyr`, `km/s`, and for log10 values
     * `log(solMass)`, `log(solMass/yr)`, `dex(yr)`, `[solMass]` or `dex`. Mapped on load to one
     * canonical form (`dex(solMass)`, `solMass/yr`; the mapping and how each download writes it:
     * src/lib/io/units.ts); a unit it cannot map is an error naming this field.
     */
    unit: z.string().default(''),
    description: nonEmpty,
    ucd: nonEmpty.optional(),
    /** What the parameter is in physical terms, so populations and relations can find it. */
    role: z.enum(['log_mass', 'log_sfr', 'dust_av', 'log_age', 'metallicity', 'redshift', 'other']).default('other'),
    /** The interim prior of the fit, used by the hierarchical relation fit and the prior-edge flag. */
    prior: Prior.optional(),
  })
  .strict();

export const Cosmology = z
  .object({
    H0: z.number().positive(),
    Om0: z.number().min(0),
    /** Default: flat, Ode0 = 1 - Om0. */
    Ode0: z.number().optional(),
  })
  .strict();

export const Units = z
  .object({
    flux: z.enum(['uJy', 'mJy', 'Jy', 'erg/s/cm2/A', 'ABmag']),
    wavelength: z.enum(['um', 'Angstrom']),
  })
  .strict();

export const Model = z
  .object({
    imf: z.enum(['Chabrier', 'Kroupa', 'Salpeter']),
    sfh: nonEmpty,
    dust: nonEmpty,
    sfrTimescaleMyr: z.number().positive(),
    notes: z.string().optional(),
  })
  .strict();

export const ReferenceRelation = z.enum(['speagle2014']);

export const Relation = z
  .object({
    /** URL-safe name: the page is /relations/<name>/ and columns are <name>_offset, <name>_tension. */
    name: z.string().regex(/^[a-z][a-z0-9_]*$/, 'lower-case letters, digits and _ , starting with a letter'),
    title: nonEmpty,
    x: nonEmpty,
    y: nonEmpty,
    population: z.enum(['star-forming', 'quiescent', 'all']).default('star-forming'),
    /** Redshift bin edges, increasing. */
    zBins: z.array(z.number().min(0)).min(2),
    pivot: z.number(),
    methods: z.array(z.enum(['deconvolved', 'hierarchical', 'running-median', 'naive', 'mixture'])).default(['deconvolved', 'naive', 'running-median']),
    reference: ReferenceRelation.optional(),
    /** Fit only above the mass-completeness limit (when a magnitude limit is declared). */
    aboveCompleteness: z.boolean().default(true),
    /**
     * Add a within-bin evolution term c (z - z_centre) to every fit, so a is the relation at the
     * bin centre. Off by default: it trades a bias from evolution inside wide bins for a
     * slope-evolution degeneracy in narrow or thinly populated ones.
     */
    redshiftTerm: z.boolean().default(false),
  })
  .strict();

export const PopulationRule = z
  .object({
    /** log sSFR [1/yr] below which a galaxy is quiescent; -11 is common practice at low redshift. */
    kind: z.literal('ssfr'),
    threshold: z.number().default(-11),
  })
  .strict();

export const Quality = z
  .object({
    /** Minimum Kish ESS (or autocorrelation ESS for MCMC draws); 50 is our default. */
    minEss: z.number().positive().default(50),
    /** chi-square survival probability below which a fit is poor. */
    minChi2Pvalue: z.number().min(0).max(1).default(0.001),
    /** Degrees of freedom: number of bands minus this many (the number of free parameters by default). */
    dofSubtract: z.number().int().min(0).optional(),
    /** Fraction of the prior range at either bound counted as its edge. */
    priorEdgeWidth: z.number().positive().max(0.5).default(0.02),
    /** Posterior mass in the edge region above which the posterior piles up at the bound. */
    priorEdgeMass: z.number().positive().max(1).default(0.2),
    /** Mass a secondary mode must hold for a marginal to count as multimodal. */
    multimodalMinMass: z.number().positive().max(0.5).default(0.1),
    /** |tension| above which an object is a relation outlier. */
    outlierTension: z.number().positive().default(3),
  })
  .strict();

export const Survey = z
  .object({
    /**
     * The survey's name, the same in every release of it (titles may change between releases):
     * a comparison with an earlier release (`--previous`) refuses one whose name differs. Without
     * it on either side, the titles are compared instead.
     */
    name: nonEmpty.optional(),
    /** Survey area in square degrees (for volumes). */
    areaDeg2: z.number().positive(),
    /** Magnitude limit of the selection (AB), used for mass completeness. */
    magLimit: z.number().optional(),
    /** Band in which the magnitude limit applies. */
    magBand: z.string().optional(),
  })
  .strict();

export const Citation = z
  .object({
    text: nonEmpty,
    bibtex: nonEmpty,
  })
  .strict();

/** A creator of the release: a person (family and given names) or an organisation (name). */
export const Author = z.union([
  z
    .object({
      familyNames: nonEmpty,
      givenNames: nonEmpty.optional(),
      /** ORCID iD as https://orcid.org/0000-0000-0000-0000. */
      orcid: z.string().regex(/^https:\/\/orcid\.org\/\d{4}-\d{4}-\d{4}-\d{3}[\dX]$/, 'an ORCID iD as https://orcid.org/0000-0000-0000-0000').optional(),
      affiliation: nonEmpty.optional(),
    })
    .strict(),
  z.object({ name: nonEmpty, affiliation: nonEmpty.optional() }).strict(),
]);

export const ChangelogEntry = z
  .object({
    version: nonEmpty,
    date: z.iso.date(),
    notes: nonEmpty,
  })
  .strict();

export const Tables = z
  .object({
    objects: TableRef,
    samples: TableRef.optional(),
    photometry: TableRef.optional(),
    bands: TableRef.optional(),
    spectra: TableRef.optional(),
    models: TableRef.optional(),
  })
  .strict();

export const Release = z
  .object({
    title: nonEmpty,
    version: nonEmpty,
    releaseDate: z.iso.date(),
    /** Markdown; rendered with raw HTML disabled and no external images. */
    description: nonEmpty,
    citation: Citation,
    licence: nonEmpty,
    doi: z.string().optional(),
    /**
     * Creators of the release, in citation order, for CITATION.cff and the DataCite and schema.org
     * metadata. Without it they are read from the BibTeX author field.
     */
    authors: z.array(Author).min(1).optional(),
    /** Who publishes the release (DataCite's publisher); default: the first author organisation, else the survey's name. */
    publisher: nonEmpty.optional(),
    /**
     * The absolute address where this release's site is published (ending in /): makes the
     * metadata's links absolute, and lets a later release link its object pages back to this one.
     */
    url: z.string().regex(/^https?:\/\/[^\s]+\/$/, 'an absolute http(s) address ending in /').optional(),
    changelog: z.array(ChangelogEntry).default([]),
    survey: Survey,
    cosmology: Cosmology,
    units: Units,
    model: Model,
    tables: Tables,
    parameters: z.array(Parameter).min(1),
    relations: z.array(Relation).default([]),
    populations: PopulationRule.prefault({ kind: 'ssfr' }),
    quality: Quality.prefault({}),
    site: z
      .object({
        /**
         * Above this many objects the site serves object pages from one static viewer page that
         * loads the object's shard, instead of one page each (page count and build time stay bounded).
         */
        objectPageLimit: z.number().int().positive().default(50000),
        /** Objects per shard file in viewer mode. */
        shardSize: z.number().int().positive().default(50),
      })
      .strict()
      .prefault({}),
    /** Seed for every random step (bootstrap, samplers), so builds are byte-identical. */
    seed: z.number().int().default(1),
  })
  .strict();

export type ReleaseConfig = z.infer<typeof Release>;
export type ParameterConfig = z.infer<typeof Parameter>;
export type RelationConfig = z.infer<typeof Relation>;
export type TableRefConfig = z.infer<typeof TableRef>;
export type TableName = keyof z.infer<typeof Tables>;
export type QualityConfig = z.infer<typeof Quality>;
export type AuthorConfig = z.infer<typeof Author>;
