/**
 * The whole-grid scans of the tree stages. Each stage runs once per job, so
 * a loop of its own over every cell runs mostly before the JIT has compiled
 * it: several ms per pass on a 1M-cell grid, whatever the loop does. So
 * crowns, roof rejection and outlines pass over the grid once each, through
 * these two small functions (compiled once, then shared by the stages and by
 * later jobs), and work on the cells listed. On a CHM mostly low or zero the
 * lists are short.
 *
 * Both return row-major (ascending) indices, as a view of a buffer that may
 * be up to twice as long (it grows by doubling).
 */

/** Indices of the cells whose value is at least `min` (NaN never is). */
export function cellsAtLeast(data: Float32Array, min: number): Int32Array {
  let out: Int32Array = new Int32Array(Math.min(data.length, 4096));
  let n = 0;
  for (let i = 0; i < data.length; i++) {
    if (data[i]! >= min) {
      if (n === out.length) out = grown(out, data.length);
      out[n++] = i;
    }
  }
  return out.subarray(0, n);
}

/** Indices of the cells whose value is not 0. */
export function nonZeroCells(data: Int32Array): Int32Array {
  let out: Int32Array = new Int32Array(Math.min(data.length, 4096));
  let n = 0;
  for (let i = 0; i < data.length; i++) {
    if (data[i] !== 0) {
      if (n === out.length) out = grown(out, data.length);
      out[n++] = i;
    }
  }
  return out.subarray(0, n);
}

/** A copy of `a` in a buffer twice as long, at most `max` long. */
export function grown(a: Int32Array, max: number): Int32Array {
  const b = new Int32Array(Math.min(max, 2 * a.length));
  b.set(a);
  return b;
}
