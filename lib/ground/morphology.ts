/**
 * Grey-scale erosion and dilation with a square window, in time independent of
 * the window size: the van Herk / Gil-Werman algorithm (van Herk 1992, Pattern
 * Recognition Letters 13(7); Gil & Werman 1993, IEEE PAMI 15(5)), run along
 * rows then along columns (a square window is separable). Cells beyond the
 * grid edge are ignored (they take the neutral value of the operation).
 */

/** 1-D running min (sign = 1) or max (sign = -1) over windows of `2r+1`, centred, from `src` (stride `stride`) to `dst`. */
function runLine(
  src: Float32Array, dst: Float32Array, start: number, stride: number, len: number, r: number,
  isMin: boolean, pad: Float64Array, pre: Float64Array, suf: Float64Array,
): void {
  const w = 2 * r + 1;
  const neutral = isMin ? Infinity : -Infinity;
  // Padded line of length m (a multiple of w): r neutral cells, the line, neutral cells.
  const m = Math.ceil((len + 2 * r) / w) * w;
  for (let i = 0; i < m; i++) {
    const j = i - r;
    pad[i] = j >= 0 && j < len ? src[start + j * stride] : neutral;
  }
  for (let b = 0; b < m; b += w) {
    pre[b] = pad[b];
    for (let i = b + 1; i < b + w; i++) pre[i] = isMin ? Math.min(pre[i - 1], pad[i]) : Math.max(pre[i - 1], pad[i]);
    suf[b + w - 1] = pad[b + w - 1];
    for (let i = b + w - 2; i >= b; i--) suf[i] = isMin ? Math.min(suf[i + 1], pad[i]) : Math.max(suf[i + 1], pad[i]);
  }
  // Output j covers padded [j, j + 2r]: at most two blocks, so suffix of the first, prefix of the second.
  for (let j = 0; j < len; j++) {
    const a = suf[j], b = pre[j + 2 * r];
    dst[start + j * stride] = isMin ? Math.min(a, b) : Math.max(a, b);
  }
}

/** Square-window erosion (isMin) or dilation of a w x h grid, window (2r+1)^2. Returns a new array. */
export function squareFilter(data: Float32Array, w: number, h: number, r: number, isMin: boolean): Float32Array {
  const tmp = new Float32Array(w * h);
  const out = new Float32Array(w * h);
  if (r <= 0) { out.set(data); return out; }
  const longest = Math.max(w, h) + 4 * r + 2;
  const pad = new Float64Array(longest), pre = new Float64Array(longest), suf = new Float64Array(longest);
  for (let row = 0; row < h; row++) runLine(data, tmp, row * w, 1, w, r, isMin, pad, pre, suf);
  for (let col = 0; col < w; col++) runLine(tmp, out, col, w, h, r, isMin, pad, pre, suf);
  return out;
}

/** Morphological opening (erosion, then dilation) with a square window of 2r+1 cells. */
export function opening(data: Float32Array, w: number, h: number, r: number): Float32Array {
  return squareFilter(squareFilter(data, w, h, r, true), w, h, r, false);
}
