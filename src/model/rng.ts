/**
 * Seedable pseudo-random numbers, so every allocation and simulation is reproducible from a seed.
 *
 * Generator: xoshiro128** (Blackman & Vigna, "Scrambled linear pseudorandom number generators",
 * ACM TOMS 47(4), 2021), seeded through splitmix32 so nearby seeds give unrelated streams.
 * Uniforms in [0,1) take 53 bits from two outputs. Normals: Marsaglia's polar method
 * (Marsaglia & Bray, SIAM Review 6(3), 1964), which yields two deviates per accepted pair.
 */
export interface Rng {
  /** Uniform in [0, 1). */
  next(): number;
  /** Standard normal. */
  normal(): number;
  /** Uniform integer in [0, n). */
  int(n: number): number;
}

/** 32-bit mix used to spread a seed (and to derive per-segment seeds). */
export function mix32(x: number): number {
  let z = (x + 0x9e3779b9) | 0;
  z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
  z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
  return (z ^ (z >>> 16)) >>> 0;
}

/** FNV-1a of a string, for deriving a stream per segment key from one seed. */
export function hashString(text: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) h = Math.imul(h ^ text.charCodeAt(i), 0x01000193);
  return h >>> 0;
}

export function createRng(seed: number): Rng {
  if (!Number.isFinite(seed)) seed = 0;
  // Fold the full double into 32 bits so seeds beyond 2^32 still differ.
  const lo = seed >>> 0;
  const hi = Math.floor(seed / 4294967296) >>> 0;
  let s0 = mix32(lo ^ 0x12345678);
  let s1 = mix32(s0 ^ hi);
  let s2 = mix32(s1 + 0x6a09e667);
  let s3 = mix32(s2 ^ 0xbb67ae85);
  if ((s0 | s1 | s2 | s3) === 0) s0 = 1;

  const u32 = (): number => {
    const result = Math.imul(rotl(Math.imul(s1, 5), 7), 9) >>> 0;
    const t = s1 << 9;
    s2 ^= s0;
    s3 ^= s1;
    s1 ^= s2;
    s0 ^= s3;
    s2 ^= t;
    s3 = rotl(s3, 11);
    return result;
  };
  const next = (): number => ((u32() >>> 5) * 67108864 + (u32() >>> 6)) / 9007199254740992;
  let spare = 0;
  let hasSpare = false;
  const normal = (): number => {
    if (hasSpare) {
      hasSpare = false;
      return spare;
    }
    let u: number, v: number, s: number;
    do {
      // 32-bit uniforms on [−1, 1) are ample here and twice as cheap as 53-bit ones.
      u = (u32() | 0) / 2147483648;
      v = (u32() | 0) / 2147483648;
      s = u * u + v * v;
    } while (s >= 1 || s === 0);
    const f = Math.sqrt((-2 * Math.log(s)) / s);
    spare = v * f;
    hasSpare = true;
    return u * f;
  };
  const int = (n: number): number => Math.floor(next() * n);
  return { next, normal, int };
}

function rotl(x: number, k: number): number {
  return (x << k) | (x >>> (32 - k));
}
