import { describe, it, expect } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pointsFromGeoJson } from '../../shared/schema/interp.ts';
import { prepareInterpolation } from '../../shared/interp/interpolate.ts';
import { computeRows, createGridRuntime, hiddenCellMask } from '../../shared/interp/gridKernel.ts';

/**
 * The demo's empty cells behind faults, checked with GDAL (Debian's gdal-bin: ogr2ogr projects, SpatiaLite/GEOS
 * decides intersections), not with the project's own crossing test. The demo run's heat-flow grid (kriging, 2 km
 * cells, the six demo faults as barriers, no search radius) leaves 250 cells empty: a corner triangle south of a
 * fault in the south-east and a wedge between two faults at the north edge. For each empty cell and each filled
 * cell next to one, the straight paths from the cell centre to the 260 sites are projected into the run's local
 * transverse Mercator (vertex by vertex, as the barrier test does) and tested against the fault traces with
 * ST_Intersects: an empty cell must see no site (every path meets a trace) and a filled neighbour at least one.
 */
const hasGdal =
  spawnSync('ogr2ogr', ['--version']).status === 0 &&
  spawnSync('ogrinfo', [':memory:', '-dialect', 'SQLite', '-sql', "SELECT ST_Intersects(ST_GeomFromText('POINT(0 0)'), ST_GeomFromText('POINT(0 0)'))"])
    .status === 0;
const read = (p: string) => readFileSync(new URL(`../../fixtures/demo/${p}`, import.meta.url), 'utf8');

describe('the demo heat-flow grid: cells with no site visible across faults', () => {
  it('are the 250 empty cells, and GDAL finds no site visible from any of them and one from each neighbour', () => {
    // GDAL (Debian gdal-bin, with SpatiaLite) is this check's reference: without it the test fails, it does not skip.
    if (!hasGdal) throw new Error('GDAL (ogr2ogr, ogrinfo with the SQLite dialect) is missing: apt-get install -y gdal-bin (bash .ci/run does)');
    const { points } = pointsFromGeoJson(JSON.parse(read('sites.geojson')), 'heatFlowMWm2');
    const faults = (JSON.parse(read('faults.geojson')) as { features: { geometry: { coordinates: number[][] } }[] }).features.map(
      (f) => f.geometry.coordinates,
    );
    const prep = prepareInterpolation(points, { method: 'kriging', grid: { cellKm: 2 }, faults, crossValidation: false, units: 'mW/m²' });
    const g = prep.plan.grid;
    const rt = createGridRuntime(prep.plan);
    const values = new Float32Array(g.width * g.height);
    const stats = computeRows(rt, 0, g.height, values, null);
    const hidden = hiddenCellMask(rt, values);
    let nan = 0;
    for (const v of values) if (Number.isNaN(v)) nan++;
    expect(nan).toBe(250);
    expect(stats.hidden).toBe(250);
    expect(hidden.reduce((s, v) => s + v, 0)).toBe(250);

    // The empty cells and the filled cells next to them (8-neighbourhood).
    const cells: number[] = [];
    for (let r = 0; r < g.height; r++)
      for (let c = 0; c < g.width; c++) {
        let near = false;
        for (let dr = -1; dr <= 1; dr++)
          for (let dc = -1; dc <= 1; dc++) {
            const rr = r + dr,
              cc = c + dc;
            if (rr >= 0 && rr < g.height && cc >= 0 && cc < g.width && hidden[rr * g.width + cc] === 1) near = true;
          }
        if (near) cells.push(r * g.width + c);
      }
    const paths = cells.flatMap((k) => {
      const lon = g.west + ((k % g.width) + 0.5) * g.dx,
        lat = g.north - (Math.floor(k / g.width) + 0.5) * g.dy;
      return Array.from(points.lon, (_, i) => ({
        type: 'Feature',
        properties: { cell: k },
        geometry: {
          type: 'LineString',
          coordinates: [
            [lon, lat],
            [points.lon[i], points.lat[i]],
          ],
        },
      }));
    });
    const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'barrier-demo-'));
    try {
      const db = join(dir, 'check.sqlite');
      writeFileSync(join(dir, 'paths.geojson'), JSON.stringify({ type: 'FeatureCollection', features: paths }));
      writeFileSync(join(dir, 'faults.geojson'), read('faults.geojson'));
      const srs = prep.plan.projection.def;
      const ogr = (args: string[]) => {
        const p = spawnSync('ogr2ogr', args, { encoding: 'utf8' });
        expect(p.status, p.stderr).toBe(0);
      };
      ogr(['-f', 'SQLite', '-dsco', 'SPATIALITE=YES', '-t_srs', srs, db, join(dir, 'paths.geojson'), '-nln', 'paths']);
      ogr(['-update', '-t_srs', srs, db, join(dir, 'faults.geojson'), '-nln', 'faults']);
      const sql =
        'SELECT p.cell AS cell, SUM(CASE WHEN EXISTS (SELECT 1 FROM faults f WHERE ST_Intersects(p.geometry, f.geometry)) THEN 0 ELSE 1 END) AS seen FROM paths p GROUP BY p.cell';
      const out = spawnSync('ogrinfo', ['-ro', '-q', '-dialect', 'SQLite', '-sql', sql, db], { encoding: 'utf8', maxBuffer: 1 << 26 });
      expect(out.status, out.stderr).toBe(0);
      const seen = new Map<number, number>();
      for (const m of out.stdout.matchAll(/cell \(Integer\) = (\d+)\s+seen \(Integer\) = (\d+)/g)) seen.set(Number(m[1]), Number(m[2]));
      expect(seen.size).toBe(cells.length);
      let hiddenChecked = 0,
        filledChecked = 0;
      for (const k of cells) {
        if (hidden[k] === 1) {
          expect(seen.get(k), `cell ${k}`).toBe(0);
          hiddenChecked++;
        } else {
          expect(seen.get(k), `cell ${k}`).toBeGreaterThan(0);
          filledChecked++;
        }
      }
      expect(hiddenChecked).toBe(250);
      expect(filledChecked).toBeGreaterThan(20);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }, 600_000);
});
