// Treetops, crowns, outlines and roof rejection on a seeded invented canopy.
// Run: npm run build && node dist/bench/crowns.js [size]
import { findTreetops } from '../lib/trees/treetops.js';
import { growCrowns } from '../lib/trees/crowns.js';
import { traceOutlines } from '../lib/trees/outlines.js';
import { rejectNonTrees } from '../lib/trees/nontree.js';
import type { Grid } from '../lib/raster/grid.js';

function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function canopy(size: number, cellM: number): Grid {
  const rand = rng(42);
  const data = new Float32Array(size * size);
  const trees = Math.round((size * cellM) ** 2 / 40); // one tree per 40 m2
  for (let t = 0; t < trees; t++) {
    const cx = rand() * size, cy = rand() * size, h = 5 + rand() * 25, rM = 1.5 + rand() * 3.5;
    const rc = rM / cellM, R = Math.ceil(rc);
    for (let r = Math.max(0, Math.floor(cy) - R); r <= Math.min(size - 1, Math.floor(cy) + R); r++) {
      for (let c = Math.max(0, Math.floor(cx) - R); c <= Math.min(size - 1, Math.floor(cx) + R); c++) {
        const d2 = ((c - cx) ** 2 + (r - cy) ** 2) / (rc * rc);
        if (d2 >= 1) continue;
        const z = h * Math.sqrt(1 - d2);
        if (z > data[r * size + c]!) data[r * size + c] = z;
      }
    }
  }
  for (let i = 0; i < data.length; i++) data[i]! += (rand() - 0.5) * 0.3;
  return { width: size, height: size, cellSize: cellM, originX: 0, originY: size * cellM, data };
}

const size = Number(process.argv[2] ?? 2000);
const chm = canopy(size, 0.5);
const t0 = performance.now();
const tops = findTreetops(chm, { minHeightM: 2, window: 'combined' });
const t1 = performance.now();
const labels = growCrowns(chm, tops, { minHeightM: 2, floorFraction: 0.3, reachM: 'auto', window: 'combined' });
const t2 = performance.now();
const nt = rejectNonTrees(labels, tops, { chm });
const t3 = performance.now();
const outlines = traceOutlines(nt.labels, nt.tops.count);
const t4 = performance.now();
const mc = (size * size) / 1e6;
const rate = (ms: number) => `${ms.toFixed(0)} ms (${(mc / (ms / 1000)).toFixed(1)} Mcells/s)`;
console.log(`${size} x ${size} cells, ${tops.count} tops, ${nt.removed} rejected, ${outlines.ringKind.length} rings`);
console.log(`treetops ${rate(t1 - t0)}; crowns ${rate(t2 - t1)}; roofs ${rate(t3 - t2)}; outlines ${rate(t4 - t3)}`);
