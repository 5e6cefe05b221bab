// Seeded random streams and distributions (re-exports only).
export { RandomStream, createStream, hashUniform, mix32 } from './prng.ts';
export { normalPdf, normalCdf, normalQuantile } from './normal-cdf.ts';
export { drawUniform, drawNormal, drawTruncatedNormal, drawTriangular, drawFrom, nominalValue, distributionMean, type Distribution } from './distributions.ts';
