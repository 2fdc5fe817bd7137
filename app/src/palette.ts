/**
 * Colours of the app. The canopy-height ramp runs from pale straw (low) to
 * deep ink blue (tall) with lightness falling steadily, so it reads the same
 * for the common colour-vision deficiencies and in grey; the marks drawn over
 * it (outlines, tops, selection) differ in shape and line, not only hue.
 */
const RAMP: [number, number, number][] = [
  [246, 240, 214], // 0 m
  [214, 226, 160],
  [140, 196, 140],
  [72, 152, 140],
  [40, 104, 132],
  [30, 58, 104],
  [22, 26, 62],    // top of the scale
];

export const MARK = {
  outline: '#111111',
  top: '#ffffff',
  topRing: '#111111',
  selected: '#f2a900',
  edited: '#8e3fbf',
  deleted: '#6b6b6b',
  merge: '#d1495b',
} as const;

/** RGB of a height on a ramp from 0 to maxM. */
export function heightRgb(hM: number, maxM: number): [number, number, number] {
  const t = Math.max(0, Math.min(1, hM / maxM)) * (RAMP.length - 1);
  const i = Math.min(RAMP.length - 2, Math.floor(t));
  const f = t - i;
  const a = RAMP[i]!, b = RAMP[i + 1]!;
  return [a[0] + (b[0] - a[0]) * f, a[1] + (b[1] - a[1]) * f, a[2] + (b[2] - a[2]) * f];
}

export function rgbCss([r, g, b]: [number, number, number]): string {
  return `rgb(${Math.round(r)}, ${Math.round(g)}, ${Math.round(b)})`;
}

/** A rounded scale top for the legend: the next multiple of 5 m above the tallest cell. */
export function scaleTopM(maxM: number): number {
  return Math.max(5, Math.ceil(maxM / 5) * 5);
}
