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
  /** Area being drawn: a dashed outline over a light veil, readable on every canopy colour. */
  area: '#ffffff',
  areaFill: 'rgba(255, 255, 255, 0.25)',
  /** Outside the processed area: a grey veil, and its edge dashed in near-black. */
  outsideArea: 'rgba(90, 90, 90, 0.55)',
  areaEdge: '#111111',
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

/**
 * Side-view point colours, our own picks. Neighbouring keys differ in
 * lightness by a wide step as well as in hue, so they stay apart for the
 * common colour-vision deficiencies and when printed in grey; the legend
 * names every key, so colour is never the only cue.
 */
export const RETURN_KEYS: { label: string; colour: string; test: (returnNumber: number) => boolean }[] = [
  { label: '1st return', colour: '#0b3c5d', test: (r) => r === 1 },
  { label: '2nd return', colour: '#e3a21a', test: (r) => r === 2 },
  { label: '3rd return', colour: '#2a9d8f', test: (r) => r === 3 },
  { label: '4th or later', colour: '#b23a48', test: (r) => r >= 4 },
  { label: 'no return number', colour: '#d0d0d0', test: (r) => r === 0 },
];

/** ASPRS standard class codes (LAS 1.4 R15 table of standard classes) grouped for the side view. */
export const CLASS_KEYS: { label: string; colour: string; test: (cls: number) => boolean }[] = [
  { label: 'ground (2)', colour: '#7d4e24', test: (c) => c === 2 },
  { label: 'low vegetation (3)', colour: '#d4e27a', test: (c) => c === 3 },
  { label: 'medium vegetation (4)', colour: '#5fae4f', test: (c) => c === 4 },
  { label: 'high vegetation (5)', colour: '#173d24', test: (c) => c === 5 },
  { label: 'building (6)', colour: '#8f6fc6', test: (c) => c === 6 },
  { label: 'other classes', colour: '#b8b8b8', test: (c) => c !== 2 && c !== 3 && c !== 4 && c !== 5 && c !== 6 },
];
