import { describe, expect, it } from 'vitest';
import { CLASS_KEYS, RETURN_KEYS } from '../../app/src/palette.js';
import { keyIndex } from '../../app/src/sideview.js';

// The side view's colour keys: which points each key takes, and how far the
// key colours stand apart in lightness.

/** Relative luminance and contrast ratio as defined in WCAG 2.1 (sRGB, section "relative luminance"). */
function luminance(hex: string): number {
  const [r, g, b] = [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16) / 255).map((v) => (v <= 0.03928 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4));
  return 0.2126 * r! + 0.7152 * g! + 0.0722 * b!;
}
const ratio = (a: string, b: string) => { const x = luminance(a), y = luminance(b); return (Math.max(x, y) + 0.05) / (Math.min(x, y) + 0.05); };

describe('side view keys', () => {
  it('groups points by the ASPRS standard class codes', () => {
    // Codes from the ASPRS LAS 1.4 R15 table of standard classes: 2 ground, 3/4/5 low/medium/high vegetation, 6 building, 7 low point (noise), 9 water, 18 high noise.
    const codes = new Uint8Array([2, 3, 4, 5, 6, 7, 9, 18, 0, 1]);
    const labels = Array.from(keyIndex(codes, CLASS_KEYS), (k) => CLASS_KEYS[k]!.label);
    expect(labels).toEqual(['ground (2)', 'low vegetation (3)', 'medium vegetation (4)', 'high vegetation (5)', 'building (6)',
      'other classes', 'other classes', 'other classes', 'other classes', 'other classes']);
  });

  it('groups points by return number, with 4 and later together and 0 (no return number) apart', () => {
    const r = new Uint8Array([1, 2, 3, 4, 7, 15, 0]);
    expect(Array.from(keyIndex(r, RETURN_KEYS), (k) => RETURN_KEYS[k]!.label)).toEqual(['1st return', '2nd return', '3rd return', '4th or later', '4th or later', '4th or later', 'no return number']);
  });

  it('every pair of key colours differs in lightness, not only in hue', () => {
    // A contrast ratio of 1.35 or more between any two keys of a set keeps them apart in grey and for the common colour-vision deficiencies (our own margin, computed with the WCAG 2.1 formula).
    for (const keys of [RETURN_KEYS, CLASS_KEYS]) {
      for (let i = 0; i < keys.length; i++) {
        for (let j = i + 1; j < keys.length; j++) expect(ratio(keys[i]!.colour, keys[j]!.colour), `${keys[i]!.label} / ${keys[j]!.label}`).toBeGreaterThanOrEqual(1.35);
      }
      // Every key stands off the white chart background by the same margin. This is below the 3:1 that WCAG 2.1 asks of non-text
      // marks for the palest keys (low vegetation, no return number): the legend names each key, so colour is never the only cue.
      for (const k of keys) expect(ratio(k.colour, '#ffffff'), k.label).toBeGreaterThanOrEqual(1.35);
    }
  });
});
