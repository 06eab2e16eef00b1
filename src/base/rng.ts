// The one source of randomness in roundwire. Every random choice that can affect a result
// draws from an Rng built from the plan seed and a purpose path (Rng.derive), so that any
// process can rebuild the very same stream and runs repeat bit for bit.
//
// Generator: xoshiro256** (Blackman and Vigna, "Scrambled linear pseudorandom number
// generators", ACM TOMS 47(4), 2021), seeded by expanding the seed with splitmix64 (Steele,
// Lea and Flood, OOPSLA 2014; the constants of Vigna's splitmix64.c), as the authors advise.
// The 64-bit words are kept as uint32 halves because BigInt arithmetic is far too slow for the
// sampling loops; BigInt appears only in seeding and in nextUint64 (test vectors).

import { RngError } from './rng-error.js';

const UINT64_MASK = (1n << 64n) - 1n;
const GOLDEN_GAMMA = 0x9e3779b97f4a7c15n;
const TWO_POW_32 = 4294967296;
const TWO_POW_53 = 9007199254740992;
const TWO_POW_MINUS_53 = 1 / TWO_POW_53;
/** Keeps a string path part from hashing like the number with the same 64-bit value. */
const STRING_TAG = 0x5bd1e9955bd1e995n;
const FNV64_OFFSET = 0xcbf29ce484222325n;
const FNV64_PRIME = 0x100000001b3n;

/** splitmix64's output function: a bijective 64-bit mixer. */
function mix64(z: bigint): bigint {
  z = ((z ^ (z >> 30n)) * 0xbf58476d1ce4e5b9n) & UINT64_MASK;
  z = ((z ^ (z >> 27n)) * 0x94d049bb133111ebn) & UINT64_MASK;
  return z ^ (z >> 31n);
}

function toUint64(value: number | bigint, what: string): bigint {
  if (typeof value === 'number' && !Number.isSafeInteger(value)) {
    throw new RngError('E_RNG_ARGUMENT', `${what} must be a safe integer, got ${value}`);
  }
  return BigInt.asUintN(64, BigInt(value));
}

/** FNV-1a over UTF-16 code units, finished by the mixer: stable across processes and engines. */
function hashString(text: string): bigint {
  let h = FNV64_OFFSET;
  for (let i = 0; i < text.length; i++) {
    h = ((h ^ BigInt(text.charCodeAt(i))) * FNV64_PRIME) & UINT64_MASK;
  }
  return mix64(h ^ STRING_TAG);
}

/** Vigna's splitmix64: a 64-bit counter stepped by the golden gamma, then mixed. */
export class SplitMix64 {
  private state: bigint;

  constructor(seed: bigint) {
    this.state = BigInt.asUintN(64, seed);
  }

  nextUint64(): bigint {
    this.state = (this.state + GOLDEN_GAMMA) & UINT64_MASK;
    return mix64(this.state);
  }
}

export class Rng {
  /** xoshiro256** state s0..s3 as [hi, lo] uint32 pairs: [s0hi, s0lo, s1hi, s1lo, ...]. */
  private readonly state = new Uint32Array(8);
  /** The last output word, as halves (written by step, read by the public draws). */
  private outHi = 0;
  private outLo = 0;
  /** The polar method yields normals in pairs; the second waits here. */
  private spareNormal = 0;
  private hasSpareNormal = false;

  private constructor(words: readonly bigint[]) {
    for (let w = 0; w < 4; w++) {
      const word = BigInt.asUintN(64, words[w]);
      this.state[2 * w] = Number(word >> 32n);
      this.state[2 * w + 1] = Number(word & 0xffffffffn);
    }
  }

  /** The authors' advice: fill the state with four splitmix64 outputs of the seed. */
  static fromSeed(seed: number | bigint): Rng {
    const expander = new SplitMix64(toUint64(seed, 'seed'));
    // splitmix64 is a bijection of its counter, so four consecutive outputs are never all
    // zero: the all-zero state (xoshiro's one fixed point) cannot arise.
    return new Rng([
      expander.nextUint64(),
      expander.nextUint64(),
      expander.nextUint64(),
      expander.nextUint64(),
    ]);
  }

  /** A generator with the raw state s0..s3 (for published test vectors); not all zero. */
  static fromState(words: readonly [bigint, bigint, bigint, bigint]): Rng {
    if (words.every((w) => BigInt.asUintN(64, w) === 0n)) {
      throw new RngError('E_RNG_ARGUMENT', 'the all-zero state is a fixed point of xoshiro256**');
    }
    return new Rng(words);
  }

  /**
   * An independent stream for one purpose, e.g. Rng.derive(planSeed, 'shard', clientId). The
   * path is folded into the seed part by part with the splitmix64 mixer, so the order of the
   * parts matters and any process rebuilds the same stream from the same (seed, path).
   */
  static derive(seed: number | bigint, ...path: (number | string)[]): Rng {
    let h = mix64((toUint64(seed, 'seed') + GOLDEN_GAMMA) & UINT64_MASK);
    for (const part of path) {
      const word = typeof part === 'string' ? hashString(part) : mix64(toUint64(part, 'path part'));
      h = mix64(((h ^ word) + GOLDEN_GAMMA) & UINT64_MASK);
    }
    return Rng.fromSeed(h);
  }

  /** One xoshiro256** step: output rotl(s1 * 5, 7) * 9 into outHi/outLo, then advance. */
  private step(): void {
    const s = this.state;
    const s0h = s[0],
      s0l = s[1],
      s1h = s[2],
      s1l = s[3];
    const s2h = s[4],
      s2l = s[5],
      s3h = s[6],
      s3l = s[7];

    // s1 * 5 (mod 2^64): the low product is exact in a double (< 2^35), its overflow carries.
    const p5 = s1l * 5;
    const m5l = p5 >>> 0;
    const m5h = (Math.imul(s1h, 5) + Math.floor(p5 / TWO_POW_32)) >>> 0;
    // rotl 7
    const rh = ((m5h << 7) | (m5l >>> 25)) >>> 0;
    const rl = ((m5l << 7) | (m5h >>> 25)) >>> 0;
    // * 9 (mod 2^64)
    const p9 = rl * 9;
    this.outLo = p9 >>> 0;
    this.outHi = (Math.imul(rh, 9) + Math.floor(p9 / TWO_POW_32)) >>> 0;

    // t = s1 << 17
    const th = ((s1h << 17) | (s1l >>> 15)) >>> 0;
    const tl = (s1l << 17) >>> 0;
    // s2 ^= s0; s3 ^= s1; s1 ^= s2; s0 ^= s3; s2 ^= t; s3 = rotl(s3, 45)
    const n2h = s2h ^ s0h,
      n2l = s2l ^ s0l;
    const n3h = s3h ^ s1h,
      n3l = s3l ^ s1l;
    s[2] = s1h ^ n2h;
    s[3] = s1l ^ n2l;
    s[0] = s0h ^ n3h;
    s[1] = s0l ^ n3l;
    s[4] = n2h ^ th;
    s[5] = n2l ^ tl;
    // rotl 45 = swap halves (rotl 32), then rotl 13
    s[6] = (n3l << 13) | (n3h >>> 19);
    s[7] = (n3h << 13) | (n3l >>> 19);
  }

  /** The raw 64-bit output (for test vectors; slow). */
  nextUint64(): bigint {
    this.step();
    return (BigInt(this.outHi) << 32n) | BigInt(this.outLo);
  }

  /** The upper 32 bits of one output (the authors advise the upper bits). */
  nextUint32(): number {
    this.step();
    return this.outHi;
  }

  /** Uniform in [0, 1) on the grid k / 2^53, from the upper 53 bits of one output. */
  nextFloat(): number {
    return this.next53() * TWO_POW_MINUS_53;
  }

  /** The upper 53 bits of one output as an integer in [0, 2^53). */
  private next53(): number {
    this.step();
    return this.outHi * 2097152 + (this.outLo >>> 11);
  }

  /** Uniform integer in [0, n), n an integer in [1, 2^53]; rejection removes modulo bias. */
  nextInt(n: number): number {
    if (!Number.isInteger(n) || n < 1 || n > TWO_POW_53) {
      throw new RngError('E_RNG_ARGUMENT', `nextInt needs an integer n in [1, 2^53], got ${n}`);
    }
    // The largest multiple of n not above 2^53; both operands are exact in a double.
    const limit = TWO_POW_53 - (TWO_POW_53 % n);
    for (;;) {
      const r = this.next53();
      if (r < limit) return r % n;
    }
  }

  /**
   * Standard normal by Marsaglia's polar method (Marsaglia and Bray, SIAM Review 1964): it
   * needs only log and sqrt, no trigonometry, and each accepted pair gives two draws.
   */
  normal(): number {
    if (this.hasSpareNormal) {
      this.hasSpareNormal = false;
      return this.spareNormal;
    }
    for (;;) {
      const u = 2 * this.nextFloat() - 1;
      const v = 2 * this.nextFloat() - 1;
      const s = u * u + v * v;
      if (s > 0 && s < 1) {
        const factor = Math.sqrt((-2 * Math.log(s)) / s);
        this.spareNormal = v * factor;
        this.hasSpareNormal = true;
        return u * factor;
      }
    }
  }

  /** Gamma(shape, scale 1): Marsaglia and Tsang, ACM TOMS 26(3), 2000, with their shape < 1 boost. */
  gamma(shape: number): number {
    checkShape(shape);
    if (shape >= 1) return this.gammaAtLeastOne(shape);
    return Math.exp(this.logGammaBelowOne(shape));
  }

  /** Marsaglia–Tsang for shape >= 1. */
  private gammaAtLeastOne(shape: number): number {
    const d = shape - 1 / 3;
    const c = 1 / Math.sqrt(9 * d);
    for (;;) {
      let x: number;
      let v: number;
      do {
        x = this.normal();
        v = 1 + c * x;
      } while (v <= 0);
      v = v * v * v;
      // 1 - u lies in (0, 1], so its log is finite.
      const u = 1 - this.nextFloat();
      const x2 = x * x;
      if (u < 1 - 0.0331 * x2 * x2) return d * v;
      if (Math.log(u) < 0.5 * x2 + d * (1 - v + Math.log(v))) return d * v;
    }
  }

  /**
   * log of a Gamma(shape < 1) draw via the boost G(a) = G(a + 1) U^(1/a). Kept in the log
   * domain because U^(1/a) underflows to 0 for small a, which would break a Dirichlet draw.
   */
  private logGammaBelowOne(shape: number): number {
    const boosted = this.gammaAtLeastOne(shape + 1);
    const u = 1 - this.nextFloat();
    return Math.log(boosted) + Math.log(u) / shape;
  }

  /** A point of the simplex from Dir(alpha), by normalized Gamma(alpha_j) draws. */
  dirichlet(alpha: ArrayLike<number>): Float64Array {
    const k = alpha.length;
    if (k < 1) throw new RngError('E_RNG_ARGUMENT', 'dirichlet needs at least one concentration');
    const logs = new Float64Array(k);
    let logMax = -Infinity;
    for (let j = 0; j < k; j++) {
      const a = alpha[j];
      checkShape(a);
      logs[j] = a >= 1 ? Math.log(this.gammaAtLeastOne(a)) : this.logGammaBelowOne(a);
      if (logs[j] > logMax) logMax = logs[j];
    }
    // Normalizing in the log domain (shifted by the largest) keeps small-alpha draws finite.
    let total = 0;
    for (let j = 0; j < k; j++) {
      logs[j] = Math.exp(logs[j] - logMax);
      total += logs[j];
    }
    for (let j = 0; j < k; j++) logs[j] /= total;
    return logs;
  }

  /** Fisher–Yates (Durstenfeld's form): every permutation equally likely. */
  shuffleInPlace(a: Uint32Array | number[]): void {
    for (let i = a.length - 1; i > 0; i--) {
      const j = this.nextInt(i + 1);
      const t = a[i];
      a[i] = a[j];
      a[j] = t;
    }
  }

  /**
   * k distinct integers from [0, n), sorted ascending, every k-subset equally likely (Floyd's
   * algorithm, Bentley and Floyd, CACM 30(9), 1987): k draws whatever n is.
   */
  sampleWithoutReplacement(n: number, k: number): Uint32Array {
    if (!Number.isInteger(n) || n < 0 || n > 0xffffffff) {
      throw new RngError(
        'E_RNG_ARGUMENT',
        `sampleWithoutReplacement needs an integer n in [0, 2^32), got ${n}`,
      );
    }
    if (!Number.isInteger(k) || k < 0 || k > n) {
      throw new RngError(
        'E_RNG_ARGUMENT',
        `sampleWithoutReplacement needs an integer k in [0, ${n}], got ${k}`,
      );
    }
    const chosen = new Set<number>();
    for (let j = n - k; j < n; j++) {
      const t = this.nextInt(j + 1);
      chosen.add(chosen.has(t) ? j : t);
    }
    const out = Uint32Array.from(chosen);
    out.sort();
    return out;
  }
}

function checkShape(shape: number): void {
  if (!(shape > 0) || !Number.isFinite(shape)) {
    throw new RngError('E_RNG_ARGUMENT', `gamma shape must be positive and finite, got ${shape}`);
  }
}
