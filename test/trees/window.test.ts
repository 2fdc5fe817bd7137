import { describe, expect, it } from 'vitest';
import { windowDiameterM, windowFunction } from '../../lib/trees/window.js';
import { CrowntallyError } from '../../lib/errors.js';

describe('treetop window', () => {
  // Popescu & Wynne 2004 (PE&RS 70(5)) crown width regressions; values from memory (CHECKS.md).
  const table = {
    deciduous: [3.991, 6.676, 11.151],
    pines: [3.200, 5.131, 9.544],
    combined: [3.416, 6.119, 10.624],
  } as const;
  for (const [preset, values] of Object.entries(table)) {
    it(`${preset} at 10, 20, 30 m`, () => {
      [10, 20, 30].forEach((h, i) => {
        expect(windowDiameterM(preset as 'pines', h)).toBeCloseTo(values[i]!, 3);
      });
    });
  }

  it('never shrinks as height grows (pines held at its minimum below about 7.2 m)', () => {
    for (const p of ['deciduous', 'pines', 'combined'] as const) {
      const f = windowFunction(p);
      let prev = -Infinity;
      for (let h = 0; h <= 60; h += 0.25) { const w = f(h); expect(w).toBeGreaterThanOrEqual(prev); prev = w; }
    }
    const f = windowFunction('pines');
    // Vertex of 3.75105 - 0.17919 H + 0.01241 H^2 at H = 0.17919 / 0.02482 (common practice: parabola vertex).
    const hmin = 0.17919 / 0.02482;
    const wmin = 3.75105 - 0.17919 * hmin + 0.01241 * hmin * hmin;
    expect(f(0)).toBeCloseTo(wmin, 9);
    expect(f(5)).toBeCloseTo(wmin, 9);
  });

  it('user table: linear between points, flat beyond, running maximum', () => {
    const f = windowFunction([{ heightM: 20, windowM: 6 }, { heightM: 5, windowM: 2 }, { heightM: 30, windowM: 4 }]);
    expect(f(0)).toBe(2);
    expect(f(12.5)).toBeCloseTo(4, 12);
    expect(f(25)).toBe(6); // 30 m entry lifted to 6 by the running maximum
    expect(f(100)).toBe(6);
  });

  it('rejects bad windows with BAD_OPTIONS', () => {
    expect(() => windowFunction([])).toThrow(CrowntallyError);
    expect(() => windowFunction([{ heightM: 1, windowM: -1 }])).toThrow(/positive window/);
    expect(() => windowFunction(0)).toThrow(/positive/);
  });
});
