// Messages about CSV and coordinates name the line as a spreadsheet numbers it (the header is line 1) in the upload
// route's parser and the command line's alike, and longitude/latitude given the wrong way round get one message
// with the offending value and a hint instead of one "out of range" per row.
import { describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.ts';
import { parseCsv } from '../../shared/io/csv.ts';
import { parseFeatureCollection, parsePointCsv } from '../../shared/schema/features.ts';
import { pointsFromCsv } from '../../shared/schema/interp.ts';

const errorOf = (f: () => unknown): InputError => {
  try {
    f();
  } catch (e) {
    if (e instanceof InputError) return e;
    throw e;
  }
  throw new Error('expected an InputError');
};

describe('CSV line numbers', () => {
  it('numbers records by the line they start on, counting comments, blank lines and quoted line breaks', () => {
    const text = '# caution\nlon,lat,name\n1,2,a\n\n3,4,"two\nlines"\n5,6,c\n';
    const { lines, headerLine } = parseCsv(text);
    expect(headerLine).toBe(2);
    expect(lines).toEqual([3, 5, 7]);
    expect(parseCsv('a,b\r\n1,2\r\n3,4').lines).toEqual([2, 3]);
  });

  it("names the spreadsheet line in the upload parser and the command line's reader alike", () => {
    const csv = 'lon,lat,id,heatFlowMWm2\n-128,-38,a,61\n-128.1,-38.1,b,abc\n';
    const web = errorOf(() => parsePointCsv('sites', csv));
    const cli = errorOf(() => pointsFromCsv(csv, 'heatFlowMWm2', { source: 'sites.csv' }));
    expect(web.details[0].feature).toBe('line 3');
    expect(cli.details[0].feature).toBe('line 3');
    expect(web.message).toContain('line 3');
    expect(cli.message).toContain('line 3');
    // A problem found after the rows become features (here a negative heat flow) is named by its line too.
    const neg = errorOf(() => parsePointCsv('sites', 'lon,lat,id,heatFlowMWm2\n-128,-38,a,61\n-128.1,-38.1,b,-5\n'));
    expect(String(neg.details[0].feature)).toMatch(/^line 3 \(b\)$/);
    const short = errorOf(() => parsePointCsv('sites', 'lon,lat,id\n1,2,a\n3,4\n'));
    expect(short.message).toContain('line 3');
  });
});

describe('longitude and latitude swapped', () => {
  // Thirty invented sites near 30° N, 150° W written latitude-first.
  const rows = Array.from({ length: 30 }, (_, i) => `${(30 + i * 0.01).toFixed(2)},${(-150 - i * 0.01).toFixed(2)},s${i},60`);
  const csv = ['lon,lat,id,heatFlowMWm2', ...rows].join('\n');

  it('gives one message with the first offending value and the hint, in the web and the command line', () => {
    for (const e of [errorOf(() => parsePointCsv('sites', csv)), errorOf(() => pointsFromCsv(csv, 'heatFlowMWm2', { source: 'sites.csv' }))]) {
      expect(e.code).toBe('swapped_lon_lat');
      expect(e.details).toHaveLength(1);
      expect(e.message).toContain('-150');
      expect(e.message).toContain('line 2');
      expect(e.message).toContain('29 more');
      expect(e.message).toMatch(/look swapped/);
      expect(e.message).toMatch(/holds longitudes/);
    }
  });

  it('does the same for GeoJSON points, citing the [longitude, latitude] order', () => {
    const fc = {
      type: 'FeatureCollection',
      features: Array.from({ length: 30 }, (_, i) => ({
        type: 'Feature',
        geometry: { type: 'Point', coordinates: [30, -150 - i * 0.01] },
        properties: { id: `s${i}`, heatFlowMWm2: 60 },
      })),
    };
    const e = errorOf(() => parseFeatureCollection('sites', fc));
    expect(e.code).toBe('swapped_lon_lat');
    expect(e.details).toHaveLength(1);
    expect(e.message).toContain('RFC 7946');
  });

  it('keeps the ordinary range check when exchanging would not help', () => {
    const e = errorOf(() => parsePointCsv('sites', 'lon,lat,id,heatFlowMWm2\n170,95,a,60\n-128,-38,b,61\n'));
    expect(e.code).not.toBe('swapped_lon_lat');
  });
});
