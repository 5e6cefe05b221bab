// Pixel checks on the page's map: which colours a computed layer really draws where.
import type { Page } from 'playwright-core';

/**
 * Share of the pixels over the inner 70 % of `bbox` [W, S, E, N] that carry the colours of `mapLayer`'s ramp when it is drawn alone
 * at full opacity (the base, data and other layers hidden), and the share that shows the bare base instead.
 */
export async function rampCoverage(p: Page, mapLayer: string, bbox: [number, number, number, number]): Promise<{ ramp: number; base: number; n: number }> {
  return p.evaluate(
    ([id, bbox]) => {
      const map = window.subtherm!.map;
      const runLayer = (map.getLayer(id)?.metadata as { runLayer?: string } | undefined)?.runLayer;
      const legend = window.subtherm!.run!.run.layers!.find((l) => l.name === runLayer)!.legend as { type: string; colors: string[] };
      const hex = (c: string) => [1, 3, 5].map((k) => parseInt(c.slice(k, k + 2), 16));
      const ramp = legend.colors.map(hex);
      const hidden = map
        .getStyle()
        .layers.filter((l) => l.id !== id && l.type !== 'background' && (map.getLayoutProperty(l.id, 'visibility') ?? 'visible') === 'visible')
        .map((l) => l.id);
      for (const l of hidden) map.setLayoutProperty(l, 'visibility', 'none');
      const ownVisibility = (map.getLayoutProperty(id, 'visibility') as 'visible' | 'none' | undefined) ?? 'visible';
      map.setLayoutProperty(id, 'visibility', 'visible');
      const opacity = map.getPaintProperty(id, 'color-relief-opacity');
      map.setPaintProperty(id, 'color-relief-opacity', 1);
      const distToRamp = (px: number[]) => {
        let best = Infinity;
        for (let i = 0; i + 1 < ramp.length; i++) {
          const a = ramp[i],
            b = ramp[i + 1];
          const ab = [b[0] - a[0], b[1] - a[1], b[2] - a[2]];
          const len2 = ab[0] ** 2 + ab[1] ** 2 + ab[2] ** 2 || 1;
          const t = Math.max(0, Math.min(1, ((px[0] - a[0]) * ab[0] + (px[1] - a[1]) * ab[1] + (px[2] - a[2]) * ab[2]) / len2));
          best = Math.min(best, Math.hypot(px[0] - a[0] - t * ab[0], px[1] - a[1] - t * ab[1], px[2] - a[2] - t * ab[2]));
        }
        return best;
      };
      return new Promise<{ ramp: number; base: number; n: number }>((resolve) => {
        const measure = () => {
          if (!map.areTilesLoaded()) return void map.once('idle', measure);
          const gl = map.getCanvas().getContext('webgl2') as WebGL2RenderingContext;
          const scale = gl.drawingBufferWidth / map.getCanvas().clientWidth;
          const a = map.project([bbox[0], bbox[3]]),
            b = map.project([bbox[2], bbox[1]]);
          // The inner 70 % of the sites' box: the grid covers it whatever the run's margins.
          const x0 = a.x + (b.x - a.x) * 0.15,
            x1 = b.x - (b.x - a.x) * 0.15,
            y0 = a.y + (b.y - a.y) * 0.15,
            y1 = b.y - (b.y - a.y) * 0.15;
          const w = gl.drawingBufferWidth,
            h = gl.drawingBufferHeight;
          const px = new Uint8Array(w * h * 4);
          gl.readPixels(0, 0, w, h, gl.RGBA, gl.UNSIGNED_BYTE, px);
          let n = 0,
            onRamp = 0,
            onBase = 0;
          for (let y = y0; y < y1; y += 4) {
            for (let x = x0; x < x1; x += 4) {
              const i = ((h - 1 - Math.round(y * scale)) * w + Math.round(x * scale)) * 4;
              const c = [px[i], px[i + 1], px[i + 2]];
              n++;
              if (distToRamp(c) < 28) onRamp++;
              if (Math.hypot(c[0] - 223, c[1] - 230, c[2] - 234) < 10 || Math.hypot(c[0] - 239, c[1] - 235, c[2] - 226) < 10) onBase++;
            }
          }
          for (const l of hidden) map.setLayoutProperty(l, 'visibility', 'visible');
          map.setPaintProperty(id, 'color-relief-opacity', opacity);
          map.setLayoutProperty(id, 'visibility', ownVisibility);
          resolve({ ramp: onRamp / n, base: onBase / n, n });
        };
        map.once('idle', measure);
        map.triggerRepaint();
      });
    },
    [mapLayer, bbox] as const,
  );
}

/**
 * Pixels over `bbox` [W, S, E, N] within a small colour distance of one of `colors` (#rrggbb), counted twice on the
 * map drawn with only the `layers` given (the base, data and every other layer hidden): once with them shown and
 * once with them hidden too, so that what is counted is drawn by those layers and not by the background.
 */
export async function colorPixels(
  p: Page,
  layers: string[],
  colors: string[],
  bbox: [number, number, number, number],
): Promise<{ shown: number; hidden: number; n: number }> {
  return p.evaluate(
    ([ids, colors, bbox]) => {
      const map = window.subtherm!.map;
      const want = colors.map((c) => [1, 3, 5].map((k) => parseInt(c.slice(k, k + 2), 16)));
      const saved = map
        .getStyle()
        .layers.filter((l) => l.type !== 'background')
        .map((l) => [l.id, (map.getLayoutProperty(l.id, 'visibility') as string | undefined) ?? 'visible'] as const);
      const showOnly = (on: string[]) => {
        for (const [id] of saved) map.setLayoutProperty(id, 'visibility', on.includes(id) ? 'visible' : 'none');
      };
      const count = () =>
        new Promise<{ hits: number; n: number }>((resolve) => {
          const measure = () => {
            if (!map.areTilesLoaded()) return void map.once('idle', measure);
            const gl = map.getCanvas().getContext('webgl2') as WebGL2RenderingContext;
            const scale = gl.drawingBufferWidth / map.getCanvas().clientWidth;
            const a = map.project([bbox[0], bbox[3]]),
              b = map.project([bbox[2], bbox[1]]);
            const w = gl.drawingBufferWidth,
              h = gl.drawingBufferHeight;
            const px = new Uint8Array(w * h * 4);
            gl.readPixels(0, 0, w, h, gl.RGBA, gl.UNSIGNED_BYTE, px);
            let hits = 0,
              n = 0;
            for (let y = Math.max(0, a.y); y < Math.min(h / scale, b.y); y++) {
              for (let x = Math.max(0, a.x); x < Math.min(w / scale, b.x); x++) {
                const i = ((h - 1 - Math.round(y * scale)) * w + Math.round(x * scale)) * 4;
                n++;
                if (want.some((c) => Math.hypot(px[i] - c[0], px[i + 1] - c[1], px[i + 2] - c[2]) < 24)) hits++;
              }
            }
            resolve({ hits, n });
          };
          map.once('idle', measure);
          map.triggerRepaint();
        });
      return (async () => {
        showOnly(ids);
        const shown = await count();
        showOnly([]);
        const hidden = await count();
        for (const [id, v] of saved) map.setLayoutProperty(id, 'visibility', v as 'visible' | 'none');
        return { shown: shown.hits, hidden: hidden.hits, n: shown.n };
      })();
    },
    [layers, colors, bbox] as const,
  );
}
