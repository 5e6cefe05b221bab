/**
 * The output of `subtherm isotherms` (server/cli/isotherms.ts): every product layer as a GeoTIFF (and its contours as
 * GeoJSON) with the caution and provenance, and the text answer (the layers' statistics, the central values of a
 * Monte Carlo beside the deterministic grids, the warnings, the files).
 */
import { mkdir, open } from 'node:fs/promises';
import { join } from 'node:path';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import type { GridSpec } from '../../shared/grid/grid.ts';
import type { ContourCollection } from '../../shared/grid/contours.ts';
import type { ProductCentralValue } from '../../shared/products/central-values.ts';
import { withMethod, type Provenance } from '../../shared/products/provenance.ts';
import type { ThermalProductsResult } from '../../shared/products/thermal-products.ts';
import { geojsonText } from '../io/export.ts';
import { writeGeoTiffFile } from '../io/geotiff.ts';

/**
 * Writes a contour collection as the GeoJSON text of geojsonText (the same bytes), a few thousand features at a
 * time, so a continental grid's millions of vertices never become one string.
 */
async function writeGeojsonFile(path: string, collection: ContourCollection, provenance: Provenance): Promise<void> {
  const head = geojsonText({ type: 'FeatureCollection', features: [] }, provenance);
  const fh = await open(path, 'w');
  try {
    await fh.write(head.slice(0, -2)); // up to `"features":[`
    const f = collection.features;
    for (let i = 0; i < f.length; i += 2048) {
      const part = JSON.stringify(f.slice(i, i + 2048));
      await fh.write((i === 0 ? '' : ',') + part.slice(1, -1));
    }
    await fh.write(']}');
  } finally {
    await fh.close();
  }
}

/**
 * Writes each layer (GeoTIFF, contours) into `outDir`, creating it; returns the paths written. Each layer's contours
 * are let go once written (the caller counts them first), so the later files are written beside fewer of them.
 */
export async function writeProductFiles(outDir: string, products: ThermalProductsResult, provenance: Provenance): Promise<string[]> {
  try {
    await mkdir(outDir, { recursive: true });
  } catch (e) {
    throw new InputError(`cannot create --out-dir ${outDir}`, [{ field: 'out-dir', problem: (e as NodeJS.ErrnoException).code ?? String(e) }], 'bad_option');
  }
  const files: string[] = [];
  for (const l of products.layers) {
    const p = withMethod(provenance, l.method);
    const tif = join(outDir, `${l.name}.tif`);
    await writeGeoTiffFile(tif, l.grid, { description: `${l.title} (${l.units})`, metadata: { provenance: p }, classes: l.legend.type === 'classes' });
    files.push(tif);
    if (l.contours) {
      const gj = join(outDir, `${l.name}.contours.geojson`);
      await writeGeojsonFile(gj, l.contours, withMethod(p, `contours of: ${l.method}`));
      files.push(gj);
      l.contours = undefined;
    }
  }
  return files;
}

/** The central values as a text table: the mean of the realizations first, the deterministic map beside it. */
export function centralValuesText(rows: ProductCentralValue[]): string {
  const f = (v: number | null) => (v === null ? '—' : v.toFixed(3));
  const lines = [
    'central values over the grid (mean of the realizations; the deterministic map beside it, averaged over the same cells):',
    `${'product'.padEnd(18)} ${'units'.padEnd(5)} ${'mean'.padStart(9)} ${'P50'.padStart(9)} ${'determ.'.padStart(9)} ${'mean−det.'.padStart(9)} ${'cells'.padStart(7)} ${'no mean'.padStart(7)}`,
    ...rows.map(
      (r) =>
        `${r.product.padEnd(18)} ${r.units.padEnd(5)} ${f(r.mean).padStart(9)} ${f(r.p50).padStart(9)} ${f(r.deterministic).padStart(9)} ${f(r.difference).padStart(9)} ${String(r.cells).padStart(7)} ${String(r.cellsMeanUndefined).padStart(7)}`,
    ),
    '"no mean": cells where some realization does not reach the isotherm above the search depth (or lies below the melt onset): the mean is unbounded there and left NoData',
  ];
  return lines.join('\n') + '\n';
}

/** The text answer: the caution, the layers' statistics, the central values, the counts, warnings and files. */
export function productsText(grid: GridSpec, products: ThermalProductsResult, warnings: string[], files: string[]): string {
  const f = (v: number | null) => (v === null ? '—' : v.toFixed(2));
  const out = [
    `${CAUTION}\n\n${grid.width} × ${grid.height} cells (${grid.crs}); searches to ${products.maxDepthKm} km\n`,
    `${'product'.padEnd(24)} ${'units'.padEnd(6)} ${'min'.padStart(9)} ${'median'.padStart(9)} ${'max'.padStart(9)} ${'no data'.padStart(9)}\n`,
    ...products.layers.map(
      (l) =>
        `${l.name.padEnd(24)} ${l.units.padEnd(6)} ${f(l.stats.min).padStart(9)} ${f(l.stats.median).padStart(9)} ${f(l.stats.max).padStart(9)} ${String(l.stats.noData).padStart(9)}\n`,
    ),
  ];
  if (products.monteCarlo !== null) out.push(`\n${centralValuesText(products.monteCarlo.centralValues)}`);
  out.push(`\ninconsistent cells: ${products.counts.inconsistent}; cells reaching the melt onset: ${products.counts.meltOnset}\n`);
  for (const w of warnings) out.push(`warning: ${w}\n`);
  out.push(`\nfiles:\n${files.map((p) => `  ${p}`).join('\n')}\n`);
  return out.join('');
}

/**
 * Cells inconsistent with the model are a finding about the results, not bad input: every file is written, the
 * warning (on stderr) says where to look, and the verb succeeds.
 */
export function findingWarnings(products: ThermalProductsResult, outDir: string): string {
  let s = '';
  if (products.counts.inconsistent > 0)
    s += `warning: ${products.counts.inconsistent} cell(s) are inconsistent with the heat flow; see ${join(outDir, 'inconsistent.tif')}\n`;
  if (products.counts.meltOnset > 0)
    s += `warning: ${products.counts.meltOnset} cell(s) reach the melt onset above ${products.maxDepthKm} km (no temperatures below it); see ${join(outDir, 'melt-onset.tif')}\n`;
  return s;
}
