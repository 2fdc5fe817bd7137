import { describe, expect, it } from 'vitest';
import { generateSurvey } from '../../demo/index.js';
import { readSurvey } from '../../demo/variants.js';
import { openPointCloud } from '../../lib/io/open.js';
import { bufferSource } from '../../lib/io/sources.js';
import { FLAG_OVERLAP } from '../../lib/io/types.js';

// Behaviour tests of our own invented scenes (no outside source claims correctness here,
// except where a check names the LAS specification).

const small = { seed: 11, widthM: 70, heightM: 60 };

describe('generateSurvey determinism', () => {
  it('can leave the shed out', () => {
    const withShed = generateSurvey('park', { ...small, widthM: 180, heightM: 140, firstReturnsPerM2: 1 });
    const without = generateSurvey('park', { ...small, widthM: 180, heightM: 140, firstReturnsPerM2: 1, shed: false });
    expect(withShed.las.length).not.toBe(without.las.length);
  });

  it('gives the same bytes for the same seed and different bytes for another', () => {
    const a = generateSurvey('park', small), b = generateSurvey('park', small), c = generateSurvey('park', { ...small, seed: 12 });
    expect(a.las.length).toBe(b.las.length);
    expect(Buffer.from(a.las).equals(Buffer.from(b.las))).toBe(true);
    expect(a.truth).toEqual(b.truth);
    expect(Buffer.from(a.las).equals(Buffer.from(c.las))).toBe(false);
  });
});

describe('the park survey', async () => {
  const { las, truth } = generateSurvey('park', { seed: 3 });
  const pc = await openPointCloud(bufferSource(las, 'park.las'));
  const { points: p } = await readSurvey(las);

  it('reads back with the project reader as LAS 1.4 format 7 with the WKT CRS', () => {
    // ASPRS LAS 1.4 R15: 375-byte header, format 7 records of 36 bytes.
    expect(pc.header.versionMinor).toBe(4);
    expect(pc.header.headerSize).toBe(375);
    expect(pc.header.pointFormat).toBe(7);
    expect(pc.header.pointRecordLength).toBe(36);
    expect(pc.header.pointCount).toBe(truth.pointCount);
    expect(p.count).toBe(truth.pointCount);
    expect(pc.crs.epsg).toBe(32633);
    expect(pc.crs.unitM).toBe(1);
    expect(truth.trees.length).toBeGreaterThan(50);
    expect(pc.header.bounds.maxX - pc.header.bounds.minX).toBeGreaterThan(175);
  });

  it('has about the requested first-return density outside the overlap strips', () => {
    let first = 0, firstOverlap = 0;
    for (let i = 0; i < p.count; i++) if (p.returnNumber[i] === 1) { if (p.flags[i]! & FLAG_OVERLAP) firstOverlap++; else first++; }
    const density = first / (truth.widthM * truth.heightM);
    expect(density).toBeGreaterThan(9.5);
    expect(density).toBeLessThan(10.5);
    expect(firstOverlap).toBeGreaterThan(0.03 * first); // overlap strips exist
  });

  it('puts later returns of a pulse below earlier ones, drifting sideways with the scan angle', () => {
    // Returns of one pulse are consecutive in the file and share a GPS time.
    let pulses = 0, below = 0, drift = 0, signOk = 0, withAngle = 0;
    for (let i = 0; i < p.count; i++) {
      if (p.returnNumber[i] !== 1 || p.numberOfReturns[i]! < 2) continue;
      const nk = p.numberOfReturns[i]!, l = i + nk - 1;
      expect(p.gpsTime![l]).toBe(p.gpsTime![i]);
      expect(p.returnNumber[l]).toBe(nk);
      pulses++;
      let ok = true;
      for (let k = i + 1; k <= l; k++) if (!(p.z[k]! < p.z[k - 1]!)) ok = false;
      if (ok) below++;
      const dz = p.z[i]! - p.z[l]!, dx = p.x[l]! - p.x[i]!;
      if (Math.abs(p.scanAngleDeg[i]!) > 5 && dz > 3) {
        withAngle++;
        const expected = Math.tan((Math.abs(p.scanAngleDeg[i]!) * Math.PI) / 180) * dz;
        if (Math.abs(Math.abs(dx) - expected) < 0.15) drift++;
        if (Math.abs(dx) > 0.2) signOk++;
      }
    }
    expect(pulses).toBeGreaterThan(20000);
    expect(below / pulses).toBeGreaterThan(0.99);
    expect(withAngle).toBeGreaterThan(5000);
    expect(drift / withAngle).toBeGreaterThan(0.95);
    expect(signOk / withAngle).toBeGreaterThan(0.95);
  });

  it('carries ground, vegetation, building, low-noise and unflagged outlier classes (ASPRS LAS 1.4 R15 class table)', () => {
    const counts = new Map<number, number>();
    for (let i = 0; i < p.count; i++) counts.set(p.classification[i]!, (counts.get(p.classification[i]!) ?? 0) + 1);
    for (const c of [2, 3, 4, 5, 6, 7, 1]) expect(counts.get(c) ?? 0).toBeGreaterThan(0);
    expect(counts.get(2)! / p.count).toBeGreaterThan(0.3);
    // Birds: unflagged points 30-60 m up.
    let high = 0;
    for (let i = 0; i < p.count; i++) if (p.classification[i] === 1 && p.z[i]! > 46 + 25) high++;
    expect(high).toBeGreaterThan(0);
  });

  it('makes ground brighter than foliage and times increase along each flight line', () => {
    let g = 0, ng = 0, v = 0, nv = 0, back = 0, n = 0;
    for (let i = 0; i < p.count; i++) {
      if (p.classification[i] === 2) { g += p.intensity[i]!; ng++; }
      if (p.classification[i] === 5) { v += p.intensity[i]!; nv++; }
      if (p.classification[i] !== 1 && p.classification[i] !== 7 && i > 0 && p.classification[i - 1] !== 1 && p.classification[i - 1] !== 7) {
        n++; if (p.gpsTime![i]! < p.gpsTime![i - 1]!) back++;
      }
    }
    expect(g / ng).toBeGreaterThan(1.5 * (v / nv));
    expect(back).toBe(0);
    expect(n).toBeGreaterThan(300000);
  });

  it('places the highest returns at the true treetops (heights from the truth)', () => {
    // Highest non-noise point within 1 m of each visible top, minus the lowest ground point within 3 m.
    let good = 0, tooHigh = 0, vis = 0;
    for (const t of truth.trees) {
      if (!t.visible) continue;
      // Only tops no other crown reaches within 1 m of (in clumps a neighbour's crown may stand higher there).
      if (truth.trees.some((o) => o !== t && Math.hypot(o.x - t.x, o.y - t.y) < o.crownRadiusM + 1)) continue;
      vis++;
      let top = -Infinity, ground = Infinity;
      for (let i = 0; i < p.count; i++) {
        const dx = p.x[i]! - t.x, dy = p.y[i]! - t.y;
        if (Math.abs(dx) > 3 || Math.abs(dy) > 3) continue;
        const d2 = dx * dx + dy * dy;
        if (p.classification[i]! >= 3 && p.classification[i]! <= 5 && d2 < 1) top = Math.max(top, p.z[i]!);
        if (p.classification[i] === 2 && d2 < 9) ground = Math.min(ground, p.z[i]!);
      }
      const h = top - ground;
      if (h > t.heightM + 0.6) tooHigh++;
      if (Math.abs(h - t.heightM) < 1.5) good++;
    }
    expect(vis).toBeGreaterThan(30);
    expect(tooHigh).toBe(0);
    expect(good / vis).toBeGreaterThan(0.85);
  });

  it('records visible crown areas no larger than the crown disc, and flags overtopped trees', () => {
    for (const t of truth.trees) {
      expect(t.visibleCrownAreaM2).toBeLessThanOrEqual(Math.PI * t.crownRadiusM ** 2 * 1.05 + 0.5);
      expect(t.visible).toBe(!t.overtopped);
      if (t.overtopped) expect(t.visibleCrownAreaM2).toBeLessThan(Math.PI * t.crownRadiusM ** 2);
    }
    expect(truth.trees.filter((t) => t.overtopped).length).toBeGreaterThanOrEqual(1);
    // A crown no other crown reaches is seen whole: its visible area is the disc, pi r^2
    // (common practice: circle area), up to the 0.2 m raster's edge error.
    let isolated = 0;
    for (const t of truth.trees) {
      if (truth.trees.some((o) => o !== t && Math.hypot(o.x - t.x, o.y - t.y) < o.crownRadiusM + t.crownRadiusM)) continue;
      isolated++;
      expect(Math.abs(t.visibleCrownAreaM2 / (Math.PI * t.crownRadiusM ** 2) - 1)).toBeLessThan(0.03);
    }
    expect(isolated).toBeGreaterThan(30);
    expect(new Set(truth.trees.map((t) => t.group))).toEqual(new Set(['broadleaf', 'conifer']));
  });
});

describe('orchard and closed canopy', () => {
  it('lays the orchard out in rows of small trees with gaps', () => {
    const { truth } = generateSurvey('orchard', { seed: 2 });
    for (const t of truth.trees) {
      expect(t.heightM).toBeGreaterThanOrEqual(3);
      expect(t.heightM).toBeLessThanOrEqual(5);
      expect(t.crownRadiusM).toBeGreaterThanOrEqual(1.5);
      expect(t.crownRadiusM).toBeLessThanOrEqual(2.5);
    }
    const rows = new Set(truth.trees.map((t) => Math.round((t.y - truth.originY - 4) / 5)));
    expect(rows.size).toBeGreaterThanOrEqual(14);
    // Full rows would hold 28 trees each (4 m to 116 m every 4.2 m): some are missing.
    expect(truth.trees.length).toBeLessThan(28 * rows.size);
    expect(truth.trees.length).toBeGreaterThan(0.85 * 28 * rows.size);
  });

  it('packs the woodland so crowns touch and some trees are overtopped', () => {
    const { truth } = generateSurvey('canopy', { seed: 2, widthM: 60, heightM: 60 });
    const over = truth.trees.filter((t) => t.overtopped);
    expect(over.length).toBeGreaterThan(5);
    let touching = 0;
    for (const a of truth.trees) for (const b of truth.trees) if (a.id < b.id && Math.hypot(a.x - b.x, a.y - b.y) < a.crownRadiusM + b.crownRadiusM) touching++;
    expect(touching).toBeGreaterThan(truth.trees.length / 2);
    const visArea = truth.trees.reduce((s, t) => s + t.visibleCrownAreaM2, 0);
    expect(visArea).toBeLessThanOrEqual(64 * 64); // within the scene plus crown overhang
    expect(visArea).toBeGreaterThan(0.8 * 60 * 60); // closed canopy
  });
});
