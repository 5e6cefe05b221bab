/** The part of shpjs (https://github.com/calvinmetcalf/shapefile-js) the project uses: a zip buffer → GeoJSON. */
declare module 'shpjs' {
  interface ShpCollection {
    type: 'FeatureCollection';
    features: { type: 'Feature'; geometry: { type: string; coordinates?: unknown } | null; properties: Record<string, unknown> | null }[];
    /** The Shapefile's path inside the zip, without extension. */
    fileName?: string;
  }
  export default function shp(input: ArrayBuffer | Uint8Array | Buffer): Promise<ShpCollection | ShpCollection[]>;
}
