import Papa from 'papaparse';
import proj4 from 'proj4';
import { describe, expect, it } from 'vitest';
import { csvText, treesToCSV } from '../../lib/export/csv.js';
import { buildTable, circle } from './build-table.js';

// WGS 84 / UTM zone 10N (EPSG:32610), west of Greenwich: longitudes are negative.
const UTM10 = '+proj=utm +zone=10 +datum=WGS84 +units=m +no_defs';
const toLonLat = (() => {
  const t = proj4(UTM10, 'WGS84');
  return (x: number, y: number) => t.forward([x, y]) as [number, number];
})();

const INJECTION = "=cmd|' /C calc'!A0"; // OWASP CSV injection guidance, its example payload

function sampleTable() {
  const t = buildTable([
    { x: 498765.4321, y: 4876543.2109, rings: [{ pts: circle(498765, 4876543, 4) }], returns: [120, 40, 9], metrics: { height_m: 18.456, crown_extent_m: 9.1 } },
    { x: 501234.5, y: 4877000.125, rings: [{ pts: circle(501234, 4877000, 3) }], returns: [60, 12], metrics: { height_m: 7.004, intensity_mean: NaN } },
    { x: 499000, y: 4876000, rings: [{ pts: circle(499000, 4876000, 2) }], returns: [5], metrics: { height_m: 3.5 } },
  ]);
  return t;
}

const notes = [INJECTION, 'says "hollow", near path, 3 m', 'line one\nline two'];
const extra = (i: number) => ({ species: i === 1 ? '+Acer' : 'Tilia', notes: notes[i]!, dbh_cm: i === 2 ? -1.5 : 42, edited: i === 0 });

describe('treesToCSV', () => {
  const table = sampleTable();
  const text = treesToCSV(table, toLonLat, { extra });

  it('ends every line with CRLF and nothing with a bare LF', () => {
    // RFC 4180 section 2, rule 1: records end with CRLF
    expect(text.endsWith('\r\n')).toBe(true);
    const bareLf = text.replace(/\r\n/g, '').replace(/"line one\nline two"/, '');
    expect(bareLf.includes('\n')).toBe(false);
  });

  it('parses back (papaparse) to the same numbers, negative longitudes as numbers', () => {
    const parsed = Papa.parse<Record<string, unknown>>(text, { header: true, dynamicTyping: true, skipEmptyLines: true });
    expect(parsed.errors).toEqual([]);
    const rows = parsed.data;
    expect(rows).toHaveLength(3);
    expect(parsed.meta.fields!.slice(0, 9)).toEqual(['tree_id', 'x', 'y', 'lon', 'lat', 'height_m', 'crown_area_m2', 'crown_diameter_m', 'crown_extent_m']);
    const r0 = rows[0]!;
    expect(r0.tree_id).toBe(1);
    expect(r0.x).toBe(498765.432);
    expect(r0.y).toBe(4876543.211);
    expect(r0.height_m).toBe(18.46);
    expect(r0.crown_extent_m).toBe(9.1);
    // positions converted by proj4 itself (outside library), within the 7 written decimals
    const [lon, lat] = proj4(UTM10, 'WGS84', [498765.4321, 4876543.2109]);
    expect(typeof r0.lon).toBe('number');
    expect(r0.lon as number).toBeLessThan(0);
    expect(Math.abs((r0.lon as number) - lon!)).toBeLessThanOrEqual(0.5e-7 + 1e-12);
    expect(Math.abs((r0.lat as number) - lat!)).toBeLessThanOrEqual(0.5e-7 + 1e-12);
    // UTM zone 10 has its central meridian at 123W (common practice: 6(z) - 183)
    expect(Math.abs((r0.lon as number) + 123)).toBeLessThan(0.1);
    expect(Math.abs((r0.crown_area_m2 as number) - table.columns.crown_area_m2[0]!)).toBeLessThanOrEqual(0.005);
    // return-number histogram columns, up to the highest return present
    expect(r0.points_return_1).toBe(120);
    expect(r0.points_return_3).toBe(9);
    expect(parsed.meta.fields).not.toContain('points_return_4');
    // NaN metric -> empty cell (papaparse reads it as null)
    expect(rows[1]!.intensity_mean).toBeNull();
    expect(rows[2]!.dbh_cm).toBe(-1.5);
    expect(rows[0]!.edited).toBe(true);
  });

  it('quotes commas, quotes and line breaks, and neutralises formula text', () => {
    const rows = Papa.parse<Record<string, unknown>>(text, { header: true, skipEmptyLines: true }).data;
    // OWASP CSV injection guidance: a leading = + - @ gets a single quote
    expect(rows[0]!.notes).toBe(`'${INJECTION}`);
    expect(rows[1]!.species).toBe("'+Acer");
    // RFC 4180 section 2, rules 6 and 7: quoted fields, doubled quotes
    expect(rows[1]!.notes).toBe('says "hollow", near path, 3 m');
    expect(text).toContain('"says ""hollow"", near path, 3 m"');
    expect(rows[2]!.notes).toBe('line one\nline two');
    // numbers are never prefixed, negative longitudes included
    expect(rows[0]!.lon).toMatch(/^-\d+\.\d{7}$/);
  });

  it('neutralises every leading character on the OWASP list', () => {
    // OWASP CSV injection guidance: = + - @ tab carriage return
    for (const c of ['=', '+', '-', '@', '\t', '\r']) expect(csvText(`${c}1+1`).replace(/^"/, '')[0]).toBe("'");
    expect(csvText('Tilia cordata')).toBe('Tilia cordata');
    expect(csvText('a,b')).toBe('"a,b"'); // RFC 4180 rule 6
  });

  it('leaves out lon/lat for local outputs', () => {
    const local = treesToCSV(table, null);
    const fields = Papa.parse(local, { header: true, skipEmptyLines: true }).meta.fields!;
    expect(fields).not.toContain('lon');
    expect(fields).not.toContain('lat');
    expect(fields.slice(0, 4)).toEqual(['tree_id', 'x', 'y', 'height_m']);
  });

  it('writes no return columns for a cloud without return numbers, and a header for an empty table', () => {
    const t = buildTable([{ x: 1, y: 2, rings: [] }], 1, false);
    const fields = Papa.parse(treesToCSV(t, null), { header: true }).meta.fields!;
    expect(fields.some((f) => f.startsWith('points_return_'))).toBe(false);
    const empty = treesToCSV(buildTable([]), toLonLat);
    expect(empty.split('\r\n')).toHaveLength(2); // header + the final CRLF
  });

  it('refuses an extra column named like a metric, and bad positions', () => {
    expect(() => treesToCSV(table, toLonLat, { extra: () => ({ lon: 1 }) })).toThrow(expect.objectContaining({ code: 'BAD_OPTIONS' }));
    expect(() => treesToCSV(table, () => [400, 0])).toThrow(expect.objectContaining({ code: 'CRS_UNSUPPORTED' }));
  });
});
