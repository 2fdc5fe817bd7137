import { describe, expect, it } from 'vitest';
import { CAUTION } from '../../lib/export/caution.js';
import { buildSummaryJson } from '../../lib/export/summary.js';
import type { SurveyReadout } from '../../lib/io/types.js';
import { DEFAULT_OPTIONS } from '../../lib/options.js';
import type { SurveySummary } from '../../lib/trees/table.js';

function readout(): SurveyReadout {
  return {
    name: 'park.laz', kind: 'laz', points: 1000, version: '1.4', pointFormat: 6,
    bounds: { minX: 0, minY: 0, minZ: 10, maxX: 100, maxY: 50, maxZ: 40 },
    crs: { epsg: 32633, wkt: null, proj4: null, unitM: 1, verticalUnitM: 1, unitName: 'metre', notes: [] },
    classes: { '2': 400, '5': 600 }, classNames: { '2': 'ground', '5': 'high vegetation' },
    returns: { '1': 800, '2': 200 }, firstReturns: 800, firstReturnDensityPerM2: 0.16,
    densityAreaM2: 5000, densityArea: 'bounding box', qualityLevel: 'below QL3 by density', qualityNote: '',
    hasRgb: false, hasGpsTime: true, looksPhotogrammetric: false, photogrammetricReason: '', warnings: [],
  };
}

function summary(): SurveySummary {
  return {
    treeCount: 0, areaM2: 5000, treesPerHa: 0, canopyCover: 0,
    heightHistogram: { binM: 5, counts: [0, 0] }, profile: { layerM: 1, counts: [3, 1] },
    meanHeightM: NaN, maxHeightM: -Infinity,
  };
}

describe('buildSummaryJson', () => {
  const options = { ...DEFAULT_OPTIONS, cellSizeM: 0.5, window: [{ heightM: 5, windowM: 3 }, { heightM: 30, windowM: 9 }] };
  const obj = buildSummaryJson({
    readout: readout(), summary: summary(), options, warnings: ['no ground class: ground filter used'],
    software: { name: 'crowntally', version: '0.1.0' },
    outputs: [{ file: 'trees.geojson', kind: 'trees GeoJSON', bytes: 1234 }, { file: 'chm.tif', kind: 'CHM GeoTIFF' }],
  }) as Record<string, any>;

  it('holds the caution, read-out, summary, options, warnings and outputs', () => {
    expect(obj.caution).toBe(CAUTION);
    expect(obj.software).toEqual({ name: 'crowntally', version: '0.1.0' });
    expect(obj.survey.name).toBe('park.laz');
    expect(obj.survey.crs.epsg).toBe(32633);
    expect(obj.summary.areaM2).toBe(5000);
    expect(obj.warnings).toEqual(['no ground class: ground filter used']);
    expect(obj.outputs.map((o: { file: string }) => o.file)).toEqual(['trees.geojson', 'chm.tif']);
    expect('createdAt' in obj).toBe(false);
  });

  it('round-trips through JSON unchanged, non-finite numbers as null', () => {
    // RFC 8259: JSON numbers cannot be NaN or Infinity
    const text = JSON.stringify(obj);
    expect(JSON.parse(text)).toEqual(obj);
    expect(obj.summary.meanHeightM).toBeNull();
    expect(obj.summary.maxHeightM).toBeNull();
  });

  it('keeps the options needed to repeat the run', () => {
    expect(obj.options.cellSizeM).toBe(0.5);
    expect(obj.options.window).toEqual([{ heightM: 5, windowM: 3 }, { heightM: 30, windowM: 9 }]);
    expect(obj.options.minHeightM).toBe(DEFAULT_OPTIONS.minHeightM);
  });

  it('gives the same object for the same input', () => {
    const again = buildSummaryJson({
      readout: readout(), summary: summary(), options, warnings: ['no ground class: ground filter used'],
      software: { name: 'crowntally', version: '0.1.0' },
      outputs: [{ file: 'trees.geojson', kind: 'trees GeoJSON', bytes: 1234 }, { file: 'chm.tif', kind: 'CHM GeoTIFF' }],
    });
    expect(JSON.stringify(again)).toBe(JSON.stringify(obj));
  });
});

describe('CAUTION', () => {
  it('says the figures are estimates, not a risk assessment, and points to a licensed arborist', () => {
    expect(CAUTION).toMatch(/estimates/);
    expect(CAUTION).toMatch(/not a tree risk assessment/);
    expect(CAUTION).toMatch(/local codes/);
    expect(CAUTION).toMatch(/qualified, licensed arborist/);
  });
});
