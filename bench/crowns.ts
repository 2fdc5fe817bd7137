// Treetops, crowns, outlines and roof rejection on a seeded invented canopy.
// Run: npm run build && node dist/bench/crowns.js [size]
import { findTreetops } from '../lib/trees/treetops.js';
import { growCrowns } from '../lib/trees/crowns.js';
import { traceOutlines } from '../lib/trees/outlines.js';
import { rejectNonTrees } from '../lib/trees/nontree.js';
import { syntheticCanopy } from './synthetic.js';

const size = Number(process.argv[2] ?? 2000);
const chm = syntheticCanopy(size, 0.5);
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
