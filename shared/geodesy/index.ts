// Geodesy on the WGS84 ellipsoid (re-exports only).
export { WGS84_A_M, WGS84_B_M, WGS84_E, WGS84_E2, WGS84_F } from './ellipsoid.ts';
export { authalicQ, gridRowAreasM2, isLonLatCrs, lonLatCellAreaM2, projectedCellAreasM2, groundStepKm, type ToLonLat } from './cell-area.ts';
export { geodesicPolygonAreaM2, ringAreaM2 } from './polygon-area.ts';
export { cellSizeText, groundCellKmRange, groundCellWarning, GROUND_CELL_VARIATION, GROUND_CELL_WARNING } from './ground-cell.ts';
