/** Bounding box of a stored GeoJSON body: [west, south, east, north] in degrees, or null when it has no position. */
export function bodyBbox(body: string): [number, number, number, number] | null {
  let v: unknown;
  try {
    v = JSON.parse(body);
  } catch {
    return null;
  }
  return geoJsonBbox(v);
}

/** Bounding box of a parsed GeoJSON value: [west, south, east, north] in degrees, or null when it has no position. */
export function geoJsonBbox(v: unknown): [number, number, number, number] | null {
  let w = Infinity,
    s = Infinity,
    e = -Infinity,
    n = -Infinity;
  // Iterative walk over every coordinate array (a position is an array whose first two members are numbers).
  const stack: unknown[] = [v];
  while (stack.length > 0) {
    const x = stack.pop();
    if (Array.isArray(x)) {
      if (x.length >= 2 && typeof x[0] === 'number' && typeof x[1] === 'number') {
        const lon = x[0],
          lat = x[1];
        if (Number.isFinite(lon) && Number.isFinite(lat)) {
          if (lon < w) w = lon;
          if (lon > e) e = lon;
          if (lat < s) s = lat;
          if (lat > n) n = lat;
        }
      } else for (const c of x) stack.push(c);
    } else if (x !== null && typeof x === 'object') {
      const o = x as Record<string, unknown>;
      if (o.type === 'FeatureCollection') stack.push(o.features);
      else if (o.type === 'Feature') stack.push(o.geometry);
      else if (o.type === 'GeometryCollection') stack.push(o.geometries);
      else if ('coordinates' in o) stack.push(o.coordinates);
    }
  }
  return w <= e && s <= n ? [w, s, e, n] : null;
}
