/**
 * Seeded pseudo-random numbers for synthetic data: the same seed gives the same stack on every
 * machine. Not for anything secret.
 */

export interface Random {
  /** Uniform on [0, 1), 32 random bits. */
  uniform(): number;
  /** Standard normal (mean 0, SD 1). */
  normal(): number;
  /** Poisson with mean `lambda` ≥ 0. */
  poisson(lambda: number): number;
}

/** Knuth below this mean (cost grows with λ), PTRS at and above it (the switch point numpy uses). */
export const POISSON_PTRS_FROM = 10;

/**
 * xoshiro128** (Blackman & Vigna, "Scrambled linear pseudorandom number generators", 2018), state
 * filled from the seed by SplitMix32-style mixing so nearby seeds give unrelated streams.
 */
export function createRandom(seed: number): Random {
  let x = (seed >>> 0) ^ 0x9e3779b9;
  const mix = () => {
    x = (x + 0x9e3779b9) >>> 0;
    let z = x;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
    return (z ^ (z >>> 16)) >>> 0;
  };
  // Uniforms are made in blocks with the state in local variables, then handed out one by one:
  // about 4× faster than stepping a state kept in the closure (V8 boxes numbers ≥ 2^30 there).
  const state = new Int32Array([mix(), mix(), mix(), mix()]);
  if ((state[0] | state[1] | state[2] | state[3]) === 0) state[0] = 1; // the all-zero state never leaves zero
  const block = new Float64Array(1024);
  let next = block.length;

  function refill(): void {
    let s0 = state[0];
    let s1 = state[1];
    let s2 = state[2];
    let s3 = state[3];
    for (let i = 0; i < block.length; i++) {
      const r = Math.imul(rotl(Math.imul(s1, 5), 7), 9);
      const t = s1 << 9;
      s2 ^= s0;
      s3 ^= s1;
      s1 ^= s2;
      s0 ^= s3;
      s2 ^= t;
      s3 = rotl(s3, 11);
      block[i] = (r >>> 0) / 4294967296;
    }
    state[0] = s0;
    state[1] = s1;
    state[2] = s2;
    state[3] = s3;
    next = 0;
  }

  function uniform(): number {
    if (next === block.length) refill();
    return block[next++];
  }

  // Marsaglia polar method (Marsaglia & Bray, 1964); the second value of each pair is kept.
  const spare = new Float64Array(1);
  let hasSpare = false;
  function normal(): number {
    if (hasSpare) {
      hasSpare = false;
      return spare[0];
    }
    let u: number;
    let v: number;
    let s: number;
    do {
      u = 2 * uniform() - 1;
      v = 2 * uniform() - 1;
      s = u * u + v * v;
    } while (s >= 1 || s === 0);
    const f = Math.sqrt((-2 * Math.log(s)) / s);
    spare[0] = v * f;
    hasSpare = true;
    return u * f;
  }

  function poisson(lambda: number): number {
    if (!(lambda >= 0) || !Number.isFinite(lambda)) throw new RangeError(`Poisson mean must be a finite number ≥ 0, got ${lambda}`);
    if (lambda === 0) return 0;
    return lambda < POISSON_PTRS_FROM ? poissonKnuth(lambda, uniform) : poissonPtrs(lambda, uniform);
  }

  return { uniform, normal, poisson };
}

function rotl(x: number, k: number): number {
  return (x << k) | (x >>> (32 - k));
}

/**
 * Knuth, The Art of Computer Programming vol. 2, 3.4.1: multiply uniforms until the product drops
 * below e^−λ. Exact; about λ + 1 uniforms per sample, so only for small λ.
 */
export function poissonKnuth(lambda: number, uniform: () => number): number {
  const limit = Math.exp(-lambda);
  let k = 0;
  let p = uniform();
  while (p > limit) {
    k++;
    p *= uniform();
  }
  return k;
}

/**
 * PTRS, Hörmann, "The transformed rejection method for generating Poisson random variables",
 * Insurance: Mathematics and Economics 12:39, 1993. Exact (rejection), about 2.3 uniforms per sample.
 */
export function poissonPtrs(lambda: number, uniform: () => number): number {
  const slam = Math.sqrt(lambda);
  const loglam = Math.log(lambda);
  const b = 0.931 + 2.53 * slam;
  const a = -0.059 + 0.02483 * b;
  const invalpha = 1.1239 + 1.1328 / (b - 3.4);
  const vr = 0.9277 - 3.6224 / (b - 2);
  for (;;) {
    const u = uniform() - 0.5;
    const v = uniform();
    const us = 0.5 - Math.abs(u);
    const k = Math.floor(((2 * a) / us + b) * u + lambda + 0.43);
    if (us >= 0.07 && v <= vr) return k;
    if (k < 0 || (us < 0.013 && v > us)) continue;
    if (Math.log(v) + Math.log(invalpha) - Math.log(a / (us * us) + b) <= -lambda + k * loglam - logFactorial(k)) return k;
  }
}

// ln k! for small k by summing logs once: the slow path of PTRS needs it for about half the samples
// at λ ≈ 25, and a table lookup is much cheaper than the series.
const LOG_FACTORIAL = (() => {
  const t = new Float64Array(4096);
  for (let k = 2; k < t.length; k++) t[k] = t[k - 1] + Math.log(k);
  return t;
})();

export function logFactorial(k: number): number {
  return k < LOG_FACTORIAL.length ? LOG_FACTORIAL[k] : logGamma(k + 1);
}

// Stirling-series coefficients B₂ₙ / (2n(2n − 1)) for ln Γ (Abramowitz & Stegun 6.1.41).
const STIRLING = [1 / 12, -1 / 360, 1 / 1260, -1 / 1680, 1 / 1188, -691 / 360360, 1 / 156, -3617 / 122400, 43867 / 244188, -174611 / 125400];

/** ln Γ(x) for x > 0: Stirling series at x ≥ 7, shifted down by the recurrence Γ(x + 1) = xΓ(x) below. */
export function logGamma(x: number): number {
  if (!(x > 0)) throw new RangeError(`logGamma needs x > 0, got ${x}`);
  let shift = 0;
  let x0 = x;
  while (x0 < 7) {
    shift += Math.log(x0);
    x0 += 1;
  }
  const x2 = 1 / (x0 * x0);
  let series = 0;
  for (let k = STIRLING.length - 1; k >= 0; k--) series = series * x2 + STIRLING[k];
  return series / x0 + 0.5 * Math.log(2 * Math.PI) + (x0 - 0.5) * Math.log(x0) - x0 - shift;
}
