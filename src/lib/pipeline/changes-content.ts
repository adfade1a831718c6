/**
 * What a comparison with an earlier release publishes: `downloads/changes.json` (every list in
 * full) and, for the site, `content/changes.json` (the same with long lists cut to their first
 * entries and their full lengths kept) and `content/changes-objects.json` (each object's values
 * in the earlier release, by slug, for its page). Plain JSON-serialisable data only.
 */
import type { Estimate } from './content.ts';
import type { ShiftHistogram, ShiftSummary } from '../core/changes.ts';

export interface ReleaseRef {
  title: string;
  version: string;
  releaseDate: string;
  doi?: string;
  /** Where that release's site is published, when known. */
  url?: string;
}

export interface MovedObject {
  id: string;
  slug: string;
  previous: Estimate;
  current: Estimate;
  /** Shift of the median in units of the combined uncertainty. */
  shiftSigma: number;
}

export interface ParameterChange {
  name: string;
  label: string;
  unit: string;
  /** Objects in both releases with both medians and intervals. */
  compared: number;
  /** Objects whose |shift| exceeds the threshold, largest first (cut in the site copy). */
  moved: MovedObject[];
  nMoved: number;
  summary: ShiftSummary;
  histogram: ShiftHistogram;
}

export interface FlagChange {
  bit: number;
  name: string;
  label: string;
  raised: number;
  cleared: number;
  /** Ids that gained or lost the flag, in catalogue order (cut in the site copy). */
  raisedIds: string[];
  clearedIds: string[];
}

export interface EstimateChange {
  previous: Estimate;
  current: Estimate;
  /** current median - previous median */
  difference: number;
  sigma: number;
}

export interface MethodChange {
  method: string;
  status: 'compared' | 'new' | 'dropped';
  n: { previous: number | null; current: number | null };
  a: EstimateChange | null;
  b: EstimateChange | null;
  s: EstimateChange | null;
}

export interface RelationChange {
  name: string;
  title: string;
  status: 'compared' | 'new' | 'dropped';
  bins: { zLo: number; zHi: number; status: 'compared' | 'new' | 'dropped'; methods: MethodChange[] }[];
  /** Largest |sigma| over the compared bins, methods and parameters, and where it is. */
  maxSigma: number | null;
  where: string | null;
}

export interface ChangesContent {
  release: ReleaseRef;
  previous: ReleaseRef & {
    /** The previous catalogue that was read (file name) and its SHA-256. */
    catalogue: { file: string; sha256: string };
  };
  settings: {
    thresholdSigma: number;
    matchRadiusArcsec: number;
    shift: string;
    renamed: string;
  };
  counts: {
    previous: number;
    current: number;
    /** Objects in both releases under the same id. */
    sameId: number;
    added: number;
    removed: number;
    renamed: number;
    /** Objects compared (same id or renamed). */
    compared: number;
    flagsRaised: number;
    flagsCleared: number;
  };
  added: { id: string; slug: string }[];
  removed: { id: string; ra: number; dec: number }[];
  renamed: { previousId: string; id: string; slug: string; separationArcsec: number }[];
  parameters: ParameterChange[];
  newParameters: string[];
  droppedParameters: string[];
  flags: FlagChange[];
  relations: RelationChange[];
  changelog: { version: string; date: string; notes: string };
  /** Full lengths of the lists that the site copy cuts (absent in the download, which is complete). */
  truncated?: { added: number; removed: number; renamed: number };
}

/** One object's values in the earlier release, for its page. */
export interface PreviousObject {
  version: string;
  /** Its id there (differs when renamed). */
  id: string;
  renamed: boolean;
  flags: number;
  params: { name: string; previous: Estimate | null; shiftSigma: number | null }[];
}
