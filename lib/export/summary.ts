import type { SurveyReadout } from '../io/types.js';
import type { SurveySummary } from '../trees/table.js';
import { CAUTION } from './caution.js';

/** A file a run wrote, listed in summary.json so the outputs can be told apart later. */
export interface OutputRecord {
  /** File name as written (relative to the output folder). */
  file: string;
  /** What it holds, e.g. 'trees GeoJSON', 'trees CSV', 'CHM GeoTIFF'. */
  kind: string;
  bytes?: number;
}

export interface SummaryInput {
  readout: SurveyReadout;
  summary: SurveySummary;
  /** Options exactly as used (cell size resolved), so the run can be repeated. */
  options: object;
  warnings: string[];
  software: { name: 'crowntally'; version: string };
  outputs?: OutputRecord[];
  /** ISO 8601 time of the run; left out by default so the same input gives the same file. */
  createdAt?: string;
}

/** Layout version of the summary object; raise it when a member changes meaning. */
export const SUMMARY_FORMAT_VERSION = 1;

/**
 * Deep copy that JSON can hold without surprises: NaN and Infinity become
 * null (JSON has no such numbers), typed arrays become arrays, functions and
 * undefined members are dropped, and a cycle is cut rather than looping.
 */
function jsonSafe(v: unknown, seen: WeakSet<object>): unknown {
  if (v === null) return null;
  if (typeof v === 'number') return Number.isFinite(v) ? v : null;
  if (typeof v === 'string' || typeof v === 'boolean') return v;
  if (typeof v === 'bigint') return Number(v);
  if (typeof v !== 'object') return undefined;
  if (seen.has(v)) return null;
  seen.add(v);
  let out: unknown;
  if (ArrayBuffer.isView(v) && !(v instanceof DataView)) {
    out = Array.from(v as unknown as ArrayLike<number>, (x) => (Number.isFinite(x) ? x : null));
  } else if (Array.isArray(v)) {
    out = v.map((x) => { const y = jsonSafe(x, seen); return y === undefined ? null : y; });
  } else {
    const o: Record<string, unknown> = {};
    for (const [k, x] of Object.entries(v)) {
      const y = jsonSafe(x, seen);
      if (y !== undefined) o[k] = y;
    }
    out = o;
  }
  seen.delete(v);
  return out;
}

/**
 * The object written as summary.json: software and format version, the
 * caution, the survey read-out, the survey figures, the options used, the
 * warnings and the outputs written. Everything in it is plain JSON.
 */
export function buildSummaryJson(input: SummaryInput): object {
  const seen = new WeakSet<object>();
  const out: Record<string, unknown> = {
    software: { name: input.software.name, version: input.software.version },
    formatVersion: SUMMARY_FORMAT_VERSION,
  };
  if (input.createdAt !== undefined) out.createdAt = input.createdAt;
  out.caution = CAUTION;
  out.survey = jsonSafe(input.readout, seen);
  out.summary = jsonSafe(input.summary, seen);
  out.options = jsonSafe(input.options, seen);
  out.warnings = [...input.warnings];
  out.outputs = jsonSafe(input.outputs ?? [], seen);
  return out;
}
