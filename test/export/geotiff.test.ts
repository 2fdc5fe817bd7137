import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { fromArrayBuffer, globals } from 'geotiff';
import { describe, expect, it } from 'vitest';
import { chmToGeoTIFF } from '../../lib/export/geotiff.js';
import type { CrsInfo } from '../../lib/io/types.js';
import type { Grid } from '../../lib/raster/grid.js';

const here = path.dirname(fileURLToPath(import.meta.url));
const FIXTURES = path.resolve(here, '../../../shared/fixtures/laz-pairs');

function crs(partial: Partial<CrsInfo>): CrsInfo {
  return { epsg: null, wkt: null, proj4: null, unitM: 1, verticalUnitM: 1, unitName: 'metre', notes: [], ...partial };
}

/** A small CHM with empty cells and a few crowns (invented values). */
function sampleGrid(width = 37, height = 23, cellSize = 0.5): Grid {
  const data = new Float32Array(width * height);
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) data[r * width + c] = (r * 7 + c * 3) % 11 === 0 ? NaN : Math.fround(0.25 * r + 0.1 * c + Math.sin(r * c));
  }
  return { width, height, cellSize, originX: 512345.5, originY: 5301234, data };
}

/** The GeoKeyDirectory, doubles and ASCII records of a LAS file, read per the LAS 1.2 layout (ASPRS LAS 1.2: VLR header 54 bytes). */
function lasGeoKeys(file: string): NonNullable<CrsInfo['geoKeys']> {
  const b = readFileSync(file);
  const headerSize = b.readUInt16LE(94);
  const vlrCount = b.readUInt32LE(100);
  let off = headerSize;
  let directory = new Uint16Array(0), doubles = new Float64Array(0), ascii = '';
  for (let i = 0; i < vlrCount; i++) {
    const user = b.toString('latin1', off + 2, off + 18).replace(/\0.*$/s, '');
    const id = b.readUInt16LE(off + 18);
    const len = b.readUInt16LE(off + 20);
    const d = Uint8Array.prototype.slice.call(b, off + 54, off + 54 + len);
    if (user === 'LASF_Projection' && id === 34735) directory = new Uint16Array(d.buffer, 0, len >> 1);
    if (user === 'LASF_Projection' && id === 34736) doubles = new Float64Array(d.buffer, 0, len >> 3);
    if (user === 'LASF_Projection' && id === 34737) ascii = Buffer.from(d).toString('latin1');
    off += 54 + len;
  }
  return { directory, doubles, ascii };
}

async function readBack(buf: ArrayBuffer) {
  const tiff = await fromArrayBuffer(buf);
  const image = await tiff.getImage();
  const [band] = (await image.readRasters()) as unknown as [Float32Array];
  return { image, band };
}

describe('chmToGeoTIFF', () => {
  it('reads back (geotiff.js) with the same values, origin, pixel size and projected CRS key', async () => {
    const g = sampleGrid();
    const { image, band } = await readBack(chmToGeoTIFF(g, crs({ epsg: 32633, proj4: '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs' })));
    expect(image.getWidth()).toBe(g.width);
    expect(image.getHeight()).toBe(g.height);
    // GeoTIFF 1.1 / OGC: ModelTiepoint raster (0,0) -> model (originX, originY); ModelPixelScale
    expect(image.getOrigin()).toEqual([g.originX, g.originY, 0]);
    expect(image.getResolution()).toEqual([g.cellSize, -g.cellSize, 0]);
    expect(band).toBeInstanceOf(Float32Array);
    expect(band.length).toBe(g.data.length);
    let nan = 0;
    for (let i = 0; i < g.data.length; i++) {
      if (Number.isNaN(g.data[i])) { expect(Number.isNaN(band[i])).toBe(true); nan++; } else expect(band[i]).toBe(g.data[i]);
    }
    expect(nan).toBeGreaterThan(0);
    expect(Number.isNaN(image.getGDALNoData())).toBe(true);
    const keys = image.getGeoKeys()!;
    // GeoTIFF 1.1: ProjectedCSTypeGeoKey (3072) carries the EPSG code; model type 1 = projected
    expect(keys.ProjectedCSTypeGeoKey).toBe(32633);
    expect(keys.GTModelTypeGeoKey).toBe(1);
    expect(keys.GTRasterTypeGeoKey).toBe(1); // RasterPixelIsArea
    expect(keys.GeographicTypeGeoKey).toBeUndefined();
  });

  it('reads back with tifffile (Debian python3-tifffile), a second TIFF reader', () => {
    const g = sampleGrid();
    const file = path.join(mkdtempSync(path.join(tmpdir(), 'crowntally-tif-')), 'chm.tif');
    writeFileSync(file, new Uint8Array(chmToGeoTIFF(g, crs({ epsg: 32633 }))));
    const script = [
      'import json, sys, math, tifffile',
      'with tifffile.TiffFile(sys.argv[1]) as t:',
      '    p = t.pages[0]; a = p.asarray()',
      '    tags = {k: p.tags[k].value for k in (33550, 33922, 34735, 42113)}',
      '    print(json.dumps({"shape": list(a.shape), "dtype": str(a.dtype),',
      '        "values": [None if math.isnan(v) else float(v) for v in a.ravel().tolist()],',
      '        "scale": list(tags[33550]), "tie": list(tags[33922]), "keys": list(tags[34735]), "nodata": tags[42113]}))',
    ].join('\n');
    const r = spawnSync('/usr/bin/python3', ['-c', script, file], { encoding: 'utf8' });
    if (r.status !== 0) throw new Error(`tifffile reference failed (is Debian python3-tifffile installed?): ${r.stderr}`);
    const out = JSON.parse(r.stdout);
    // TIFF 6.0 + GeoTIFF 1.1 tags as read by tifffile
    expect(out.shape).toEqual([g.height, g.width]);
    expect(out.dtype).toBe('float32');
    expect(out.values).toEqual(Array.from(g.data, (v) => (Number.isNaN(v) ? null : v)));
    expect(out.scale).toEqual([g.cellSize, g.cellSize, 0]);
    expect(out.tie).toEqual([0, 0, 0, g.originX, g.originY, 0]);
    expect(out.keys).toEqual([1, 1, 0, 3, 1024, 0, 1, 1, 1025, 0, 1, 1, 3072, 0, 1, 32633]);
    expect(out.nodata).toBe('nan');
  });

  it('writes a geographic key for a longitude/latitude CRS', async () => {
    const g = { ...sampleGrid(5, 4, 0.0001), originX: 15.1, originY: 47.9 };
    const { image } = await readBack(chmToGeoTIFF(g, crs({ epsg: 4326, proj4: '+proj=longlat +datum=WGS84 +no_defs', unitName: 'degree' })));
    const keys = image.getGeoKeys()!;
    // GeoTIFF 1.1: GeographicTypeGeoKey (2048), model type 2 = geographic
    expect(keys.GeographicTypeGeoKey).toBe(4326);
    expect(keys.GTModelTypeGeoKey).toBe(2);
    expect(keys.ProjectedCSTypeGeoKey).toBeUndefined();
  });

  it("carries autzen_trim's user-defined GeoKeys over key for key", async () => {
    const geoKeys = lasGeoKeys(path.join(FIXTURES, 'autzen_trim.las'));
    const n = geoKeys.directory[3]!;
    expect(n).toBeGreaterThan(10);
    const g = { ...sampleGrid(20, 15, 6), originX: 636000, originY: 853000 };
    const { image, band } = await readBack(chmToGeoTIFF(g, crs({ unitM: 0.3048, unitName: 'international foot', geoKeys })));
    expect(band[1]).toBe(g.data[1]);
    const raw = image.fileDirectory.getValue('GeoKeyDirectory') as ArrayLike<number>;
    // Same key layout in LAS and GeoTIFF (ASPRS LAS 1.2 GeoKeyDirectoryTag record = GeoTIFF 1.1 tag 34735)
    expect(Array.from(raw)).toEqual(Array.from(geoKeys.directory.subarray(0, 4 + 4 * n)));
    const keys = image.getGeoKeys()! as Record<string, unknown>;
    const names = globals.geoKeyNames as Record<number, string>;
    for (let k = 0; k < n; k++) {
      const [id, loc, count, off] = Array.from(geoKeys.directory.subarray(4 + 4 * k, 8 + 4 * k)) as [number, number, number, number];
      const got = keys[names[id]!];
      if (loc === 0) expect(got).toBe(off);
      else if (loc === 34736) expect(count === 1 ? got : Array.from(got as Float64Array)).toEqual(count === 1 ? geoKeys.doubles[off] : Array.from(geoKeys.doubles.subarray(off, off + count)));
      // GeoTIFF: each ASCII key value ends with a '|' that is not part of the value
      else expect(got).toBe(geoKeys.ascii.substring(off, off + count - 1));
    }
    // autzen_trim: ProjectedCSType 32767 (user-defined), linear unit 9002 international foot (NOTICE.md)
    expect(keys.ProjectedCSTypeGeoKey).toBe(32767);
    expect(keys.ProjLinearUnitsGeoKey).toBe(9002);
  });

  it('states metre as the vertical unit, since CHM samples are metres', async () => {
    // GeoTIFF 1.1: VerticalUnitsGeoKey 4099; unit codes 9001 metre, 9002 foot (EPSG)
    const directory = Uint16Array.from([1, 1, 0, 3, 1024, 0, 1, 1, 3072, 0, 1, 2992, 4099, 0, 1, 9002]);
    const { image } = await readBack(chmToGeoTIFF(sampleGrid(4, 4, 3), crs({ geoKeys: { directory, doubles: new Float64Array(0), ascii: '' } })));
    const keys = image.getGeoKeys()!;
    expect(keys.VerticalUnitsGeoKey).toBe(9001);
    expect(keys.ProjectedCSTypeGeoKey).toBe(2992);
    expect(keys.GTRasterTypeGeoKey).toBe(1);
  });

  it('writes no CRS key at all when the survey has no CRS', async () => {
    const { image } = await readBack(chmToGeoTIFF(sampleGrid(3, 2, 1), crs({ unitName: 'unknown (taken as metre)' })));
    const keys = image.getGeoKeys() ?? {};
    expect(keys.ProjectedCSTypeGeoKey).toBeUndefined();
    expect(keys.GeographicTypeGeoKey).toBeUndefined();
    expect(keys.GTModelTypeGeoKey).toBeUndefined();
    expect(image.getOrigin()).toEqual([512345.5, 5301234, 0]);
  });

  it('refuses an empty grid, a malformed key set with no EPSG code, and a grid beyond classic TIFF', () => {
    expect(() => chmToGeoTIFF({ ...sampleGrid(1, 1), width: 0, height: 0, data: new Float32Array(0) }, crs({}))).toThrow(expect.objectContaining({ code: 'EMPTY' }));
    const bad = { directory: Uint16Array.from([1, 1, 0, 5, 1024]), doubles: new Float64Array(0), ascii: '' };
    expect(() => chmToGeoTIFF(sampleGrid(2, 2), crs({ geoKeys: bad }))).toThrow(expect.objectContaining({ code: 'CRS_UNSUPPORTED' }));
    // the size check runs before any allocation: a fake grid object claims 40000 x 40000 cells
    const huge = { width: 40000, height: 40000, cellSize: 1, originX: 0, originY: 0, data: { length: 1.6e9 } as unknown as Float32Array };
    expect(() => chmToGeoTIFF(huge, crs({}))).toThrow(expect.objectContaining({ code: 'TOO_LARGE' }));
  });
});
