import type { SerializedError } from '../errors.js';
import type { SurveyReadout } from '../io/types.js';
import type { TallyOptions } from '../options.js';
import type { ProgressEvent, TallyResult } from '../result.js';

/**
 * The worker protocol: a handful of typed messages. Requests carry an `id`;
 * every reply names the request it answers. Files go in as Blob/File (the
 * worker reads byte ranges from them) or ArrayBuffer (transferred). Results
 * come back with every typed-array buffer in the transfer list.
 */

/** Input files: Blob/File in the browser, ArrayBuffer anywhere, a path string in Node. */
export type SurveyInput = Blob | ArrayBuffer | string;

/**
 * Area of interest in file CRS units: a rectangle or polygon rings [[x,y],...].
 * A polygon with `lonLat: true` is in WGS 84 longitude, latitude degrees (a
 * GeoJSON boundary, RFC 7946) and is converted to the survey CRS first.
 */
export type AreaOfInterest =
  | { kind: 'rect'; minX: number; minY: number; maxX: number; maxY: number }
  | { kind: 'polygon'; rings: number[][][]; lonLat?: boolean };

/** A built-in invented scenario, generated inside the worker instead of files. */
export type DemoKind = 'park' | 'orchard' | 'canopy';

export interface InspectRequest { type: 'inspect'; id: number; files: SurveyInput[]; names: string[]; crs?: string; demo?: DemoKind }
export interface TallyRequest {
  type: 'tally'; id: number; files: SurveyInput[]; names: string[];
  options?: Partial<TallyOptions>;
  /** "EPSG:NNNN" for files without a CRS. */
  crs?: string;
  aoi?: AreaOfInterest;
  /** Process a built-in scenario instead of `files` (which is then empty). */
  demo?: DemoKind;
}
/**
 * Recompute metrics for crowns after an edit (merge, add): the caller sends
 * back the label grid (edited) and the DTM of a previous result; the worker
 * makes a second pass over the points and returns a table of those labels.
 */
export interface RemeasureRequest {
  type: 'remeasure'; id: number; files: SurveyInput[]; names: string[]; crs?: string;
  options?: Partial<TallyOptions>;
  labels: { width: number; height: number; cellSize: number; originX: number; originY: number; data: Int32Array };
  chm: { width: number; height: number; cellSize: number; originX: number; originY: number; data: Float32Array };
  dtm: { width: number; height: number; cellSize: number; originX: number; originY: number; data: Float32Array };
  /** Tops per label (index = label - 1), CRS units. */
  tops: { x: Float64Array; y: Float64Array };
  /** The built-in scenario the previous result came from (then `files` is empty). */
  demo?: DemoKind;
}
/**
 * The points of one crown, for its side view: horizontal distance from the
 * top (m), height above ground (m), return number and class.
 */
export interface TreePointsRequest {
  type: 'tree-points'; id: number; files: SurveyInput[]; names: string[]; crs?: string; demo?: DemoKind;
  labels: { width: number; height: number; cellSize: number; originX: number; originY: number; data: Int32Array };
  dtm: { width: number; height: number; cellSize: number; originX: number; originY: number; data: Float32Array };
  /** Crown label (table row + 1) and its top, CRS units. */
  label: number; topX: number; topY: number;
  /** Most points returned (an even sample beyond it); default 20,000. */
  maxPoints?: number;
}
export interface TreePoints {
  count: number;
  distanceM: Float32Array; heightM: Float32Array;
  returnNumber: Uint8Array; numberOfReturns: Uint8Array; classification: Uint8Array;
}
export interface TreePointsReply { type: 'tree-points'; id: number; points: TreePoints }
export interface CancelRequest { type: 'cancel'; id: number }
export type WorkerRequest = InspectRequest | TallyRequest | RemeasureRequest | CancelRequest | DecodeChunkRequest | TreePointsRequest;

export interface ProgressReply { type: 'progress'; id: number; progress: ProgressEvent }
export interface ReadoutReply { type: 'readout'; id: number; readouts: SurveyReadout[] }
export interface ResultReply { type: 'result'; id: number; result: TallyResult }
export interface RemeasureReply { type: 'remeasured'; id: number; trees: TallyResult['trees'] }
export interface ErrorReply { type: 'error'; id: number; error: SerializedError }
export type WorkerReply = ProgressReply | ReadoutReply | ResultReply | RemeasureReply | ErrorReply | DecodeChunkReply | TreePointsReply;

/**
 * Pool traffic: a LAZ chunk's compressed bytes in, its decoded points out.
 * Both directions transfer their buffers.
 */
export interface DecodeChunkRequest {
  type: 'decode-chunk'; id: number;
  bytes: Uint8Array;
  pointFormat: number; recordLength: number; pointCount: number;
  /** Header facts the decoder needs to scale and check points. */
  header: import('../io/types.js').LasHeader;
  /** Names the chunk in error messages. */
  label?: string;
}
export interface DecodeChunkReply { type: 'chunk'; id: number; chunk: import('../io/types.js').PointChunk }
