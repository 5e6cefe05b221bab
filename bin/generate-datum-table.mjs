#!/usr/bin/env node
// Writes shared/interp/towgs84-table.ts: the datum shifts of the offline EPSG definitions (epsg-index) restated as
// proj4 `+towgs84` parameters. epsg-index copies each Helmert transformation's parameters as the EPSG dataset
// stores them, but `+towgs84` means the position-vector convention with rotations in arc-seconds and scale in ppm
// (EPSG Guidance Note 7-2, §4.4.3). Transformations given in the coordinate-frame convention (EPSG method 9607),
// with rotations in microradians, radians or milli-arc-seconds, or as Molodensky-Badekas with a pivot point
// (9636/1034) are off by tens to hundreds of metres as copied. This script reads the EPSG dataset from PROJ's
// proj.db (Debian's proj-data, installed with gdal-bin), finds the transformation each definition was copied
// from, and writes the corrected parameters. Run: node bin/generate-datum-table.mjs [path/to/proj.db]
import { writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';

const require = createRequire(import.meta.url);
const Database = require('better-sqlite3');
const all = require('epsg-index/all.json');
const dbPath = process.argv[2] ?? '/usr/share/proj/proj.db';
const OUT = fileURLToPath(new URL('../shared/interp/towgs84-table.ts', import.meta.url));

/** Arc-seconds per unit of an EPSG angle unit (9104 arc-second, 9109 microradian, 9101 radian, 1031 milliarc-second). */
const ARCSEC_PER = { 9104: 1, 9109: (180 / Math.PI) * 3600e-6, 9101: (180 / Math.PI) * 3600, 1031: 1e-3 };
/** ppm per unit of an EPSG scale unit (9202 ppm, 1028 ppb, 9201 unity). */
const PPM_PER = { 9202: 1, 1028: 1e-3, 9201: 1e6 };
/** Coordinate-frame methods (rotation signs flip for position vector): 9607 Helmert, 9636 Molodensky-Badekas. */
const COORDINATE_FRAME = new Set(['9607', '9636']);
const MOLODENSKY_BADEKAS = new Set(['9636', '1034']);
const POSITION_VECTOR = new Set(['9606', '1034']);

const db = new Database(dbPath, { readonly: true });
const rows = db
  .prepare(
    `select code, method_code m, tx, ty, tz, translation_uom_code tu, rx, ry, rz, rotation_uom_code ru,
            scale_difference s, scale_difference_uom_code su, px, py, pz
       from helmert_transformation_table
      where auth_name = 'EPSG' and target_crs_auth_name = 'EPSG' and target_crs_code = '4326' and rx is not null`,
  )
  .all();

const same = (a, b) => Math.abs(a - b) <= 1e-9 * Math.max(1, Math.abs(a));
const fmt = (x) => String(Number(x.toPrecision(12)));

/** The `+towgs84` (position vector, arc-seconds, ppm) equal to one EPSG Helmert or Molodensky-Badekas row. */
function towgs84Of(r) {
  const m = String(r.m);
  if (String(r.tu) !== '9001') throw new Error(`EPSG:${r.code}: translation unit ${r.tu}`);
  const sign = COORDINATE_FRAME.has(m) ? -1 : 1;
  const k = ARCSEC_PER[r.ru];
  const ppm = PPM_PER[r.su];
  if (k === undefined || ppm === undefined) throw new Error(`EPSG:${r.code}: units ${r.ru}/${r.su}`);
  const rot = [r.rx, r.ry, r.rz].map((x) => sign * k * x);
  const s = r.s * ppm;
  let t = [r.tx, r.ty, r.tz];
  if (MOLODENSKY_BADEKAS.has(m)) {
    // X' = T + P + M·R·(X − P) = (T + P − M·R·P) + M·R·X, R the small-angle position-vector rotation.
    const [ax, ay, az] = rot.map((x) => (x / 3600) * (Math.PI / 180));
    const M = 1 + s * 1e-6;
    const P = [r.px, r.py, r.pz];
    const RP = [P[0] - az * P[1] + ay * P[2], az * P[0] + P[1] - ax * P[2], -ay * P[0] + ax * P[1] + P[2]];
    t = t.map((ti, i) => ti + P[i] - M * RP[i]);
  } else if (!POSITION_VECTOR.has(m) && m !== '9607') throw new Error(`EPSG:${r.code}: method ${m}`);
  return [...t, ...rot, s].map(fmt).join(',');
}

const table = new Map();
let correct = 0;
for (const e of Object.values(all)) {
  const hit = /\+towgs84=([^\s]+)/.exec(e.proj4 ?? '');
  if (!hit || table.has(hit[1])) continue;
  const v = hit[1].split(',').map(Number);
  if (v.length !== 7 || v.slice(3).every((x) => x === 0)) continue;
  const matches = rows.filter((r) => [r.tx, r.ty, r.tz, r.rx, r.ry, r.rz, r.s].every((x, i) => same(x, v[i])));
  if (matches.length === 0) continue;
  const fixed = new Set(matches.map(towgs84Of));
  // A transformation registered in both conventions: the copy already reads right in one of them.
  if ([...fixed].some((to) => to.split(',').every((x, i) => same(Number(x), v[i])))) {
    correct++;
    continue;
  }
  if (fixed.size > 1) throw new Error(`${hit[1]}: copied from transformations that disagree`);
  const [to] = fixed;
  table.set(hit[1], { to, codes: matches.map((r) => r.code).join(', ') });
}

const lines = [...table].map(([from, { to, codes }]) => `  // EPSG:${codes}\n  '${from}': '${to}',`);
writeFileSync(
  OUT,
  `/**
 * Corrected \`+towgs84\` parameters of the offline EPSG definitions (epsg-index): the key is the value as copied
 * there, the value the same transformation in proj4's convention (position vector, arc-seconds, ppm; EPSG Guidance
 * Note 7-2 §4.4.3). Each comment names the EPSG transformation. Generated by bin/generate-datum-table.mjs from the
 * EPSG dataset; do not edit by hand. ${correct} other seven-parameter definitions are already in proj4's convention.
 */
export const TOWGS84_CORRECTIONS: Readonly<Record<string, string>> = {
${lines.join('\n')}
};
`,
);
console.log(`${table.size} corrected datum shifts, ${correct} already right → ${OUT}`);
