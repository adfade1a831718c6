/**
 * The products that need every posterior draw, made in one streamed pass over the samples
 * table when the loader did not hold it in memory (catalogues above the object-page limit):
 * the `samples.parquet` download and the mock-calibration statistics (coverage of central
 * credible intervals and the PIT of each object, per parameter with true values).
 *
 * The pass reads the file the way the summaries do (`summarise-stream.ts`): one pass over
 * input whose objects are contiguous runs of rows, handed on in file order; otherwise a spill
 * to temporary files and objects in catalogue order. Memory holds one batch of whole objects
 * and the row group being written, never the table. With the samples in memory the same
 * products come from `samplesTable` and `calibrationFromSamples` instead; both routes give the
 * same calibration numbers, and the same Parquet rows except for their order (file order of
 * objects here, catalogue order there).
 */
import { rm } from 'node:fs/promises';
import type { Bundle } from '../bundle/load.ts';
import { ProblemSink } from '../bundle/coerce.ts';
import { COVERAGE_LEVELS, coverage, pit, type CoverageResult } from '../core/population/calibration.ts';
import { ParquetStreamWriter } from '../io/parquet.ts';
import { SAMPLE_PARAM_KIND, SAMPLES_PARQUET } from './downloads.ts';
import type { Column } from '../io/table.ts';
import { flatten, groupedBatches, NotGrouped, sampleLayout, spilledBatches, type FlatBatch, type SampleLayout } from './summarise-stream.ts';

/** Per parameter with true values: coverage of central intervals and each object's PIT. */
export type CalibrationStats = Map<string, { coverage: CoverageResult[]; pit: Float64Array }>;

/** Calibration statistics from samples held in memory by the loader (catalogue order). */
export function calibrationFromSamples(bundle: Bundle): CalibrationStats {
  const { config, objects, samples } = bundle;
  const out: CalibrationStats = new Map();
  if (!samples) return out;
  const n = objects.n;
  config.parameters.forEach((p, j) => {
    const truth = objects.truth[p.name];
    if (!truth) return;
    const total = samples.order.length;
    const values = new Float64Array(total);
    const weights = new Float64Array(total);
    const src = samples.weight ?? samples.logWeight!;
    for (let i = 0; i < n; i++) {
      const a = samples.offsets[i], b = samples.offsets[i + 1];
      let max = -Infinity;
      if (!samples.weight) for (let r = a; r < b; r++) max = Math.max(max, src[samples.order[r]]);
      for (let r = a; r < b; r++) {
        const row = samples.order[r];
        values[r] = samples.params[j][row];
        weights[r] = samples.weight ? src[row] : Math.exp(src[row] - max);
      }
    }
    const draws = { offsets: samples.offsets, values, weights };
    out.set(p.name, { coverage: coverage(truth, draws), pit: pit(truth, draws) });
  });
  return out;
}

/**
 * Linear weights of a batch (log weights as exp(l - max) per object, as the in-memory route
 * computes them, so both give bit-identical calibration) and the same normalised to sum to 1
 * per object (for the download).
 */
function batchWeights(b: FlatBatch, logWeights: boolean): { linear: Float64Array; normalised: Float64Array } {
  const linear = new Float64Array(b.weight.length);
  const normalised = new Float64Array(b.weight.length);
  for (let o = 0; o + 1 < b.offsets.length; o++) {
    const a = b.offsets[o], e = b.offsets[o + 1];
    let max = -Infinity;
    if (logWeights) for (let r = a; r < e; r++) max = Math.max(max, b.weight[r]);
    let sum = 0;
    for (let r = a; r < e; r++) sum += linear[r] = logWeights ? Math.exp(b.weight[r] - max) : b.weight[r];
    for (let r = a; r < e; r++) normalised[r] = linear[r] / sum;
  }
  return { linear, normalised };
}

interface PassSink {
  add(b: FlatBatch): Promise<void>;
  finish(): Promise<void>;
  abort(): Promise<void>;
}

export interface SamplesPassOptions {
  /** Where to write every draw as Parquet (weights normalised per object), or null. */
  parquetPath: string | null;
  /** Compute calibration statistics for parameters with true values. */
  calibration: boolean;
  /** Rows per Parquet row group (default 262144). */
  rowGroupRows?: number;
}

/** One streamed pass over the samples file: the Parquet download and the calibration statistics. */
export async function streamSampleProducts(bundle: Bundle, opts: SamplesPassOptions): Promise<{ calibration: CalibrationStats; rows: number }> {
  const { config, objects } = bundle;
  const n = objects.n;
  const L = await sampleLayout(bundle);
  const truthParams = opts.calibration ? config.parameters.map((p, j) => ({ name: p.name, j, truth: objects.truth[p.name] })).filter((t) => !!t.truth) : [];
  let hits: Float64Array[] = [];
  let counted: number[] = [];
  let pits: Float64Array[] = [];
  let rows = 0;

  const makeSink = (): PassSink => {
    hits = truthParams.map(() => new Float64Array(COVERAGE_LEVELS.length));
    counted = truthParams.map(() => 0);
    pits = truthParams.map(() => new Float64Array(n).fill(NaN));
    rows = 0;
    const writer = opts.parquetPath ? new ParquetStreamWriter(opts.parquetPath, samplesColumns(bundle, L), { rowGroupRows: opts.rowGroupRows ?? 262144, ...SAMPLES_PARQUET }) : null;
    return {
      async add(b) {
        const { linear, normalised: w } = batchWeights(b, L.logWeights);
        rows += w.length;
        truthParams.forEach((t, q) => {
          const truth = Float64Array.from(b.index, (i) => t.truth![i]);
          const draws = { offsets: b.offsets, values: b.params[t.j], weights: linear };
          const cov = coverage(truth, draws);
          const nb = cov[0].n;
          counted[q] += nb;
          cov.forEach((c, k) => (hits[q][k] += Math.round(c.fraction * nb) || 0));
          const u = pit(truth, draws);
          for (let o = 0; o < b.index.length; o++) pits[q][b.index[o]] = u[o];
        });
        if (writer) {
          const id = new Array<string>(w.length);
          for (let o = 0; o + 1 < b.offsets.length; o++) for (let r = b.offsets[o]; r < b.offsets[o + 1]; r++) id[r] = b.ids[o];
          await writer.write([id, w, ...b.params, ...(L.logPrior ? [b.logPrior!] : [])]);
        }
      },
      finish: async () => writer?.finish(),
      abort: async () => writer?.abort(),
    };
  };

  const base = { sink: new ProblemSink(), seen: new Uint8Array(n), batchRows: 16384 };
  let sink = makeSink();
  try {
    try {
      for await (const b of groupedBatches(bundle, L, base)) await sink.add(flatten(b));
    } catch (e) {
      if (!(e instanceof NotGrouped)) throw e;
      await sink.abort();
      sink = makeSink();
      for await (const b of spilledBatches(bundle, L, { ...base, sink: new ProblemSink(), seen: new Uint8Array(n) })) await sink.add(flatten(b));
    }
    await sink.finish();
  } catch (e) {
    await sink.abort();
    if (opts.parquetPath) await rm(opts.parquetPath, { force: true });
    throw e;
  }
  const calibration: CalibrationStats = new Map();
  truthParams.forEach((t, q) => {
    const m = counted[q];
    calibration.set(t.name, {
      coverage: COVERAGE_LEVELS.map((level, k) => ({ level, fraction: m > 0 ? hits[q][k] / m : NaN, n: m, binomialSe: m > 0 ? Math.sqrt((level * (1 - level)) / m) : NaN })),
      pit: pits[q],
    });
  });
  return { calibration, rows };
}

/** The columns of the samples download, as `samplesTable` writes them (values filled per batch). */
function samplesColumns(bundle: Bundle, L: SampleLayout): Column[] {
  const { config } = bundle;
  const columns: Column[] = [
    { name: 'id', kind: 'string', values: [], ucd: 'meta.id', description: 'object identifier' },
    { name: 'weight', kind: 'float64', values: new Float64Array(0), ucd: 'stat.weight', description: 'importance weight, normalised to sum to 1 per object' },
    // single precision, as in the per-object files (downloads.ts, SAMPLE_PARAM_KIND)
    ...config.parameters.map((p): Column => ({ name: p.name, kind: SAMPLE_PARAM_KIND, values: new Float32Array(0), unit: p.unit || undefined, ucd: p.ucd, description: p.description })),
  ];
  if (L.logPrior) columns.push({ name: 'log_prior', kind: 'float64', values: new Float64Array(0), description: 'natural log of the interim prior density of the draw' });
  return columns;
}
