import { describe, it, expect, afterAll } from 'vitest';
import { Matrix, solve } from 'ml-matrix';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { BlockKriging, discretisePolygon } from '../../shared/interp/blockKriging.ts';
import { createConditionalSimulator } from '../../shared/interp/simulation.ts';
import { covariance, type VariogramModel } from '../../shared/interp/variogram.ts';
import { runCliJson } from '../helpers/cli.ts';
import { prng } from '../helpers/prng.ts';

const r = prng(21);
const n = 30;
const x = new Float64Array(n),
  y = new Float64Array(n),
  z = new Float64Array(n);
for (let i = 0; i < n; i++) {
  x[i] = r() * 80;
  y[i] = r() * 80;
  z[i] = 60 + 8 * Math.sin(x[i] / 13) + 4 * r();
}
const model: VariogramModel = { model: 'spherical', nugget: 3, partialSill: 20, rangeKm: 35 };
// An L-shaped block (local km).
const L_BLOCK = [
  [
    [20, 20],
    [50, 20],
    [50, 35],
    [32, 35],
    [32, 55],
    [20, 55],
    [20, 20],
  ],
];
const C = (ax: number, ay: number, bx: number, by: number) => covariance(model, Math.hypot(ax - bx, ay - by));

describe('block kriging (Isaaks & Srivastava 1989, ch. 13; dense ml-matrix reference)', () => {
  const d = discretisePolygon(L_BLOCK, 150)!;
  const est = new BlockKriging(x, y, z, model).estimate(d);

  it('value and variance equal a dense solve of the block system with the same discretisation', () => {
    expect(d.x.length).toBeGreaterThan(60);
    for (let k = 0; k < d.x.length; k++) {
      const inL = (d.x[k] > 20 && d.x[k] < 50 && d.y[k] > 20 && d.y[k] < 35) || (d.x[k] > 20 && d.x[k] < 32 && d.y[k] > 20 && d.y[k] < 55);
      expect(inL).toBe(true);
    }
    const N = d.x.length;
    const K = Matrix.zeros(n + 1, n + 1),
      rhs = Matrix.zeros(n + 1, 1);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) K.set(i, j, C(x[i], y[i], x[j], y[j]));
      K.set(i, n, 1);
      K.set(n, i, 1);
      let s = 0;
      for (let k = 0; k < N; k++) s += C(x[i], y[i], d.x[k], d.y[k]);
      rhs.set(i, 0, s / N);
    }
    rhs.set(n, 0, 1);
    const sol = solve(K, rhs).getColumn(0);
    let cvv = 0;
    for (let k = 0; k < N; k++) for (let l = 0; l < N; l++) cvv += C(d.x[k], d.y[k], d.x[l], d.y[l]) / (N * N);
    const value = sol.slice(0, n).reduce((s, l, i) => s + l * z[i], 0);
    const variance = cvv - sol.slice(0, n).reduce((s, l, i) => s + l * rhs.get(i, 0), 0) - sol[n];
    expect(est.value).toBeCloseTo(value, 9);
    expect(est.sd ** 2).toBeCloseTo(variance, 9);
    // Averaging lowers the variance: the block sd is below the point kriging sd at the block's centre and the
    // block variance C̄(V,V) below the sill.
    expect(est.blockVariance).toBeLessThan(model.nugget + model.partialSill);
  });

  it('the block estimate is the mean of the point estimates at the discretisation points (linearity)', () => {
    const K = Matrix.zeros(n + 1, n + 1);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) K.set(i, j, C(x[i], y[i], x[j], y[j]));
      K.set(i, n, 1);
      K.set(n, i, 1);
    }
    let mean = 0;
    for (let k = 0; k < d.x.length; k++) {
      const rhs = Matrix.zeros(n + 1, 1);
      for (let i = 0; i < n; i++) rhs.set(i, 0, C(x[i], y[i], d.x[k], d.y[k]));
      rhs.set(n, 0, 1);
      const sol = solve(K, rhs).getColumn(0);
      mean += sol.slice(0, n).reduce((s, l, i) => s + l * z[i], 0) / d.x.length;
    }
    expect(est.value).toBeCloseTo(mean, 8);
  });

  it('simulated block means: mean → block estimate, variance → block-kriging variance (4 standard errors)', () => {
    // Conditional realizations at the discretisation points (exact sampler, all data conditioning, no transform);
    // block mean per realization. SE(mean) = σ_V/√R, SE(variance) = σ_V²·√(2/(R − 1)) (Gaussian sampling theory).
    const R = 3000;
    const sim = createConditionalSimulator({ x, y, z, tx: d.x, ty: d.y, model, neighbors: Infinity, sampler: 'cholesky' });
    const means: number[] = [];
    sim.run(5, 0, R, (_r, v) => {
      let s = 0;
      for (let k = 0; k < v.length; k++) s += v[k];
      means.push(s / v.length);
    });
    const m = means.reduce((a, b) => a + b, 0) / R;
    const v = means.reduce((a, b) => a + (b - m) ** 2, 0) / (R - 1);
    const s2 = est.sd ** 2;
    expect(Math.abs(m - est.value)).toBeLessThan(4 * Math.sqrt(s2 / R));
    expect(Math.abs(v - s2)).toBeLessThan(4 * s2 * Math.sqrt(2 / (R - 1)));
  });
});

describe('subtherm interpolate --block', () => {
  const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'block-cli-'));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  const write = (name: string, body: unknown) => {
    const p = join(dir, name);
    writeFileSync(p, JSON.stringify(body));
    return p;
  };
  const run = (args: string[]) => runCliJson(['interpolate', ...args]);
  it('one block per polygon by feature id, value between the data, sd > 0, units', async () => {
    const feats = [];
    for (let i = 0; i < 6; i++)
      for (let j = 0; j < 6; j++)
        feats.push({
          type: 'Feature',
          geometry: { type: 'Point', coordinates: [-128 + i * 0.1, -38 + j * 0.1] },
          properties: { id: `s${i}${j}`, heatFlowMWm2: 50 + 3 * i + 2 * j + ((i * j) % 4) },
        });
    const pts = write('p.geojson', { type: 'FeatureCollection', features: feats });
    const sq = (w: number, s: number, e: number, n: number) => [
      [
        [w, s],
        [e, s],
        [e, n],
        [w, n],
        [w, s],
      ],
    ];
    const blocks = write('b.geojson', {
      type: 'FeatureCollection',
      features: [
        { type: 'Feature', id: 'west', geometry: { type: 'Polygon', coordinates: sq(-128, -38, -127.8, -37.6) }, properties: {} },
        { type: 'Feature', geometry: { type: 'Polygon', coordinates: sq(-127.7, -37.9, -127.5, -37.5) }, properties: { id: 'east' } },
      ],
    });
    const res = await run(['--points', pts, '--method', 'kriging', '--variogram', 'spherical:1,30,60', '--size', '20x20', '--block', blocks]);
    expect(res.code).toBe(0);
    expect(res.json.blocks.map((b: { id: string }) => b.id)).toEqual(['west', 'east']);
    for (const b of res.json.blocks) {
      expect(b.value).toBeGreaterThan(50);
      expect(b.value).toBeLessThan(70);
      expect(b.sd).toBeGreaterThan(0);
      expect(b.units).toBe('mW/m²');
    }
    expect(res.json.blocks[1].value).toBeGreaterThan(res.json.blocks[0].value);
    const bad = await run(['--points', pts, '--method', 'idw', '--block', blocks]);
    expect(bad.code).toBe(2);
  });
});
