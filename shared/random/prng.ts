/**
 * Seeded, splittable pseudo-random streams. `createStream(seed, index)` gives a stream that is independent of every
 * other (seed, index) pair, so work split across threads or tiles draws exactly the same numbers as a serial run.
 *
 * Generator: xoshiro128** (Blackman & Vigna 2018, "Scrambled linear pseudorandom number generators"), 128-bit
 * state, period 2^128 − 1, 32-bit output. Seeding: the seed and the stream indices are hashed with the murmur3
 * 32-bit finaliser (Appleby, MurmurHash3 `fmix32`) chained SplitMix-style, so neighbouring indices give unrelated
 * states. A uniform double takes two outputs (53 random bits).
 */

const GOLDEN = 0x9e3779b9;

/** murmur3 fmix32: a bijective avalanche mix of a 32-bit integer. */
export function mix32(h: number): number {
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}

/** Splits a non-negative safe integer (or any finite number, truncated) into low and high 32-bit words. */
function words(x: number): [number, number] {
  if (!Number.isFinite(x)) throw new RangeError(`random seed/index must be finite, got ${x}`);
  const t = Math.trunc(Math.abs(x));
  const lo = t % 4294967296;
  const hi = Math.floor(t / 4294967296) % 4294967296;
  // Negative values get their own half of the key space.
  return [lo >>> 0, (x < 0 ? hi ^ 0x80000000 : hi) >>> 0];
}

/** A stream of pseudo-random numbers; `reset` re-seeds it in place (no allocation), for hot loops. */
export class RandomStream {
  private s0 = 0;
  private s1 = 0;
  private s2 = 0;
  private s3 = 0;
  /** Second Box–Muller value kept for the next normal draw (NaN = none). */
  private spare = NaN;

  constructor(seed: number, ...indices: number[]) {
    this.reset(seed, ...indices);
  }

  /** Re-seeds from (seed, indices…): the same arguments always give the same stream. */
  reset(seed: number, i0 = 0, i1 = 0, i2 = 0): this {
    const [a, b] = words(seed);
    const [c, d] = words(i0);
    const [e, f] = words(i1);
    const [g, h] = words(i2);
    let k = mix32(a ^ 0x243f6a88);
    k = mix32(k ^ b ^ GOLDEN);
    k = mix32(k ^ c ^ 0x3c6ef372);
    k = mix32(k ^ d ^ 0xdaa66d2b);
    k = mix32(k ^ e ^ 0x78dde6e4);
    k = mix32(k ^ f ^ 0x1715609d);
    k = mix32(k ^ g ^ 0xb54cda56);
    k = mix32(k ^ h ^ 0x5384540f);
    // SplitMix-style expansion of the key into four state words (never all zero).
    this.s0 = mix32((k + GOLDEN) >>> 0);
    this.s1 = mix32((k + 2 * GOLDEN) >>> 0);
    this.s2 = mix32((k + 3 * GOLDEN) >>> 0);
    this.s3 = mix32((k + 4 * GOLDEN) >>> 0);
    if ((this.s0 | this.s1 | this.s2 | this.s3) === 0) this.s0 = 1;
    this.spare = NaN;
    // Discard a few outputs so the state is well mixed.
    for (let i = 0; i < 4; i++) this.nextUint32();
    return this;
  }

  /** Next 32-bit unsigned integer (xoshiro128**). */
  nextUint32(): number {
    const s0 = this.s0,
      s1 = this.s1,
      s2 = this.s2,
      s3 = this.s3;
    const m = Math.imul(s1, 5);
    const r = Math.imul((m << 7) | (m >>> 25), 9) >>> 0;
    const t = s1 << 9;
    let n2 = s2 ^ s0;
    let n3 = s3 ^ s1;
    const n1 = s1 ^ n2;
    const n0 = s0 ^ n3;
    n2 ^= t;
    n3 = (n3 << 11) | (n3 >>> 21);
    this.s0 = n0 >>> 0;
    this.s1 = n1 >>> 0;
    this.s2 = n2 >>> 0;
    this.s3 = n3 >>> 0;
    return r;
  }

  /** Uniform double in [0, 1), 53 random bits. */
  uniform(): number {
    const a = this.nextUint32() >>> 5; // 27 bits
    const b = this.nextUint32() >>> 6; // 26 bits
    return (a * 67108864 + b) / 9007199254740992;
  }

  /** Uniform double in (0, 1): never exactly 0, safe for logarithms. */
  uniformOpen(): number {
    let u = this.uniform();
    while (u === 0) u = this.uniform();
    return u;
  }

  /** Standard normal draw (Box–Muller, Box & Muller 1958; the second value of each pair is kept). */
  normal(): number {
    const s = this.spare;
    if (s === s) {
      this.spare = NaN;
      return s;
    }
    const u1 = this.uniformOpen();
    const u2 = this.uniform();
    const r = Math.sqrt(-2 * Math.log(u1));
    const a = 2 * Math.PI * u2;
    this.spare = r * Math.sin(a);
    return r * Math.cos(a);
  }
}

/** A new stream for (seed, index…): e.g. `createStream(seed, realization)`. */
export function createStream(seed: number, i0 = 0, i1 = 0, i2 = 0): RandomStream {
  return new RandomStream(seed, i0, i1, i2);
}

/**
 * A stateless uniform in (0, 1) keyed by (seed, a, b, c): the same key always gives the same value; used where one
 * draw per (realization, cell) is needed without creating a stream per cell. Hash of the key by chained fmix32.
 */
export function hashUniform(seed: number, a: number, b: number, c = 0): number {
  const [s0, s1] = words(seed);
  let k = mix32(s0 ^ 0x6a09e667);
  k = mix32(k ^ s1 ^ 0xbb67ae85);
  k = mix32(k ^ (a >>> 0) ^ 0x3c6ef372);
  k = mix32(k ^ (Math.floor(a / 4294967296) >>> 0) ^ 0xa54ff53a);
  k = mix32(k ^ (b >>> 0) ^ 0x510e527f);
  k = mix32(k ^ (Math.floor(b / 4294967296) >>> 0) ^ 0x9b05688c);
  k = mix32(k ^ (c >>> 0) ^ 0x1f83d9ab);
  const hi = mix32(k ^ 0x5be0cd19) >>> 5; // 27 bits
  const lo = mix32(k ^ 0xcbbb9d5d) >>> 6; // 26 bits
  return (hi * 67108864 + lo + 0.5) / 9007199254740992;
}
