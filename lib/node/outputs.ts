import { mkdir, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { makeLonLatTransform } from '../crs/transform.js';
import { buildSummaryJson, CAUTION, chmToGeoTIFF, treesToCSV, treesToGeoJSON, type OutputRecord } from '../export/index.js';
import type { TallyResult } from '../result.js';

/** Said in summary.json and on the terminal when a run writes local outputs only. */
export const LOCAL_ONLY_WARNING = 'local outputs only: trees.csv has x/y in the survey CRS and no lon/lat; no GeoJSON was written';

export interface WriteOutputs {
  /** Write x/y only: no lon/lat, no GeoJSON (surveys whose CRS is unknown). */
  localOnly: boolean;
  version: string;
}

/** Writes trees.csv, trees.geojson, chm.tif and summary.json into `dir`; returns what was written. */
export async function writeOutputs(dir: string, r: TallyResult, o: WriteOutputs): Promise<OutputRecord[]> {
  await mkdir(dir, { recursive: true });
  const out: OutputRecord[] = [];
  const put = async (file: string, kind: string, data: string | Uint8Array) => {
    await writeFile(join(dir, file), data);
    out.push({ file, kind, bytes: typeof data === 'string' ? Buffer.byteLength(data) : data.byteLength });
  };
  const toLonLat = o.localOnly ? null : makeLonLatTransform(r.crs).toLonLat;
  await put('trees.csv', 'trees CSV', treesToCSV(r.trees, toLonLat));
  if (toLonLat) await put('trees.geojson', 'trees GeoJSON', treesToGeoJSON(r.trees, toLonLat));
  // A trees.geojson left by an earlier run in this folder would pass for this run's crowns.
  else await rm(join(dir, 'trees.geojson'), { force: true });
  await put('chm.tif', 'CHM GeoTIFF (metres)', new Uint8Array(chmToGeoTIFF(r.chm, r.crs)));
  const warnings = [...r.warnings];
  if (o.localOnly) warnings.push(LOCAL_ONLY_WARNING);
  const summary = buildSummaryJson({
    readout: r.readout, summary: r.summary, options: r.options, warnings,
    software: { name: 'crowntally', version: o.version },
    outputs: [...out, { file: 'summary.json', kind: 'run summary' }],
  });
  await put('summary.json', 'run summary', JSON.stringify(summary, null, 2) + '\n');
  return out;
}

export { CAUTION };
