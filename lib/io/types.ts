/**
 * Shared reader types. Points travel as structure-of-arrays chunks (tens of
 * thousands of points each), never as one object per point.
 */

/** Random-access bytes: a Blob/File, an ArrayBuffer, or (lib/node) a file path. */
export interface ByteSource {
  /** Total size in bytes. */
  readonly size: number;
  /** A display name (file name) for messages; never trusted as HTML. */
  readonly name: string;
  /** Reads `length` bytes at `offset`. May return fewer bytes only at the end of the source. */
  read(offset: number, length: number): Promise<Uint8Array>;
  close?(): Promise<void>;
}

/** Bits of PointChunk.flags. */
export const FLAG_SYNTHETIC = 1;
export const FLAG_KEYPOINT = 2;
export const FLAG_WITHHELD = 4;
export const FLAG_OVERLAP = 8;

export interface PointChunk {
  count: number;
  /** Coordinates in file CRS units, scale and offset applied. */
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  intensity: Uint16Array;
  /** 0 where the source has no return numbers (XYZ without them). */
  returnNumber: Uint8Array;
  numberOfReturns: Uint8Array;
  classification: Uint8Array;
  /** FLAG_* bits. */
  flags: Uint8Array;
  /** Degrees, from the 8-bit rank (formats 0-5) or the int16 0.006-degree field (6-10). */
  scanAngleDeg: Float32Array;
  gpsTime?: Float64Array;
  /** 16-bit colour; files storing 8-bit colour are scaled by 257 on read. */
  red?: Uint16Array;
  green?: Uint16Array;
  blue?: Uint16Array;
  nir?: Uint16Array;
}

export interface Bounds { minX: number; minY: number; minZ: number; maxX: number; maxY: number; maxZ: number }

export interface Vlr {
  userId: string;
  recordId: number;
  description: string;
  /** Offset of the payload in the file. */
  dataOffset: number;
  data: Uint8Array;
  extended: boolean;
}

export interface LasHeader {
  versionMajor: number;
  versionMinor: number;
  headerSize: number;
  offsetToPointData: number;
  pointFormat: number;
  pointRecordLength: number;
  /** True count: the 64-bit field for 1.4, else the legacy field. */
  pointCount: number;
  /** Points by return number 1..15 (index 0 = return 1). */
  pointsByReturn: number[];
  scale: [number, number, number];
  offset: [number, number, number];
  bounds: Bounds;
  globalEncoding: number;
  systemId: string;
  software: string;
  creationDay: number;
  creationYear: number;
  compressed: boolean;
}

export interface CrsInfo {
  /** EPSG code of the horizontal CRS, or null (user-defined, unknown). */
  epsg: number | null;
  /** OGC WKT when the file carries it (or one built for a user-defined CRS). */
  wkt: string | null;
  /** A proj4 definition usable for reprojection, or null when none could be made. */
  proj4: string | null;
  /** Horizontal unit to metres (1, 0.3048, 1200/3937). */
  unitM: number;
  /** Vertical unit to metres. */
  verticalUnitM: number;
  /** Name of the horizontal unit, for read-outs ("metre", "international foot", ...). */
  unitName: string;
  /** Where the facts came from, and any assumption made (e.g. vertical unit taken from horizontal). */
  notes: string[];
  /** Raw GeoKeyDirectory (unsigned shorts), kept so a GeoTIFF can carry the same CRS. */
  geoKeys?: { directory: Uint16Array; doubles: Float64Array; ascii: string };
}

export interface ReadOptions {
  signal?: AbortSignal;
  /** Called after each chunk with points read so far. */
  onProgress?: (pointsRead: number, pointsTotal: number) => void;
}

/** An opened point cloud: the header facts plus a streaming chunk iterator. */
export interface PointCloud {
  readonly kind: 'las' | 'laz' | 'xyz';
  readonly name: string;
  readonly header: LasHeader;
  readonly crs: CrsInfo;
  readonly vlrs: Vlr[];
  /** The bytes behind the cloud (LAS/LAZ), for readers that fetch ranges themselves (the chunk pool). */
  readonly source?: ByteSource;
  /** Streams the points; may be called more than once (a second pass decodes again). */
  chunks(opts?: ReadOptions): AsyncIterable<PointChunk>;
  close(): Promise<void>;
}

/** The survey read-out (`crowntally inspect --json` prints this object). */
export interface SurveyReadout {
  name: string;
  kind: 'las' | 'laz' | 'xyz';
  points: number;
  /** "1.4"; "text" for XYZ. */
  version: string;
  pointFormat: number | null;
  bounds: Bounds;
  crs: { epsg: number | null; wkt: string | null; proj4: string | null; unitM: number; verticalUnitM: number; unitName: string; notes: string[] };
  /** ASPRS class code -> count. */
  classes: Record<string, number>;
  /** ASPRS names of the classes present, same keys. */
  classNames: Record<string, string>;
  /** Return number -> count (0 = none recorded). */
  returns: Record<string, number>;
  firstReturns: number;
  firstReturnDensityPerM2: number;
  /** Area (m2) the density is measured over, and how. */
  densityAreaM2: number;
  densityArea: string;
  /** e.g. "QL1 by density"; see lib/io/readout.ts for the rule and its caveat. */
  qualityLevel: string;
  qualityNote: string;
  hasRgb: boolean;
  hasGpsTime: boolean;
  looksPhotogrammetric: boolean;
  photogrammetricReason: string;
  /** XYZ: malformed, NaN or Inf lines skipped. */
  skippedLines?: number;
  warnings: string[];
}
