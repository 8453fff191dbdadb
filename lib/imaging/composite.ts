// Composites of mapped channels. Each channel brings its raw pixels and its fused rgbaLut
// (lut.ts), so a composite is a few table lookups per pixel and a per-byte combine, done on
// packed 32-bit words (four 8-bit lanes R, G, B, A) without branches.

export interface CompositeChannel {
  pixels: Uint16Array | Uint8Array;
  /** Raw value → packed RGBA (buildRgbaLut). */
  rgbaLut: Uint32Array;
}

const HIGH = 0x80808080;
const LOW7 = 0x7f7f7f7f;

/**
 * Per-lane saturating add of two packed RGBA words (each byte min(a + b, 255)), branch-free:
 * add the low 7 bits of every lane (no carry can cross a lane), restore bit 7 by XOR, take the
 * carry out of bit 7 as the majority of a₇, b₇ and the carry into bit 7, and OR in 0xFF for every
 * lane that carried. Verified against a per-byte reference in tests.
 */
export function addSaturate(a: number, b: number): number {
  const low = (a & LOW7) + (b & LOW7);
  const sum = low ^ ((a ^ b) & HIGH);
  const carry = ((a & b) | ((a ^ b) & low)) & HIGH;
  return (sum | ((carry >>> 7) * 0xff)) >>> 0;
}

/**
 * Per-lane maximum of two packed words, branch-free: (a | 0x80…) − (b & 0x7f…) has bit 7 set in a
 * lane where a's low 7 bits ≥ b's; combined with the top bits this gives a mask of lanes where
 * a ≥ b.
 */
export function maxLanes(a: number, b: number): number {
  const diff = (a | HIGH) - (b & LOW7);
  const ge = ((a & ~b) | (~(a ^ b) & diff)) & HIGH;
  const mask = (ge >>> 7) * 0xff;
  return ((a & mask) | (b & ~mask)) >>> 0;
}

function check(channels: readonly CompositeChannel[], out: Uint32Array): number {
  if (channels.length === 0) throw new RangeError("A composite needs at least one channel");
  const n = channels[0].pixels.length;
  for (const c of channels) if (c.pixels.length !== n) throw new RangeError(`Channels differ in size (${c.pixels.length} vs ${n})`);
  if (out.length < n) throw new RangeError(`out holds ${out.length} pixels, need ${n}`);
  return n;
}

/**
 * Additive composite, clamped per colour component at 255 (alpha stays 255): for each pixel the
 * sum of every channel's mapped colour. One pass over the pixels; 1–3 channels have unrolled loops.
 */
export function compositeAdd(channels: readonly CompositeChannel[], out: Uint32Array): Uint32Array {
  const n = check(channels, out);
  if (channels.length === 1) {
    const [{ pixels: p0, rgbaLut: l0 }] = channels;
    for (let i = 0; i < n; i++) out[i] = l0[p0[i]];
  } else if (channels.length === 2) {
    const [{ pixels: p0, rgbaLut: l0 }, { pixels: p1, rgbaLut: l1 }] = channels;
    for (let i = 0; i < n; i++) out[i] = addSaturate(l0[p0[i]], l1[p1[i]]);
  } else if (channels.length === 3) {
    const [{ pixels: p0, rgbaLut: l0 }, { pixels: p1, rgbaLut: l1 }, { pixels: p2, rgbaLut: l2 }] = channels;
    for (let i = 0; i < n; i++) out[i] = addSaturate(addSaturate(l0[p0[i]], l1[p1[i]]), l2[p2[i]]);
  } else {
    const [{ pixels: p0, rgbaLut: l0 }] = channels;
    for (let i = 0; i < n; i++) out[i] = l0[p0[i]];
    for (let c = 1; c < channels.length; c++) {
      const { pixels, rgbaLut } = channels[c];
      for (let i = 0; i < n; i++) out[i] = addSaturate(out[i], rgbaLut[pixels[i]]);
    }
  }
  return out;
}

/** Maximum composite: each colour component is the largest over the channels (alpha stays 255). */
export function compositeMax(channels: readonly CompositeChannel[], out: Uint32Array): Uint32Array {
  const n = check(channels, out);
  const [{ pixels: p0, rgbaLut: l0 }] = channels;
  if (channels.length === 3) {
    const [, { pixels: p1, rgbaLut: l1 }, { pixels: p2, rgbaLut: l2 }] = channels;
    for (let i = 0; i < n; i++) out[i] = maxLanes(maxLanes(l0[p0[i]], l1[p1[i]]), l2[p2[i]]);
    return out;
  }
  for (let i = 0; i < n; i++) out[i] = l0[p0[i]];
  for (let c = 1; c < channels.length; c++) {
    const { pixels, rgbaLut } = channels[c];
    for (let i = 0; i < n; i++) out[i] = maxLanes(out[i], rgbaLut[pixels[i]]);
  }
  return out;
}

/**
 * The same additive composite through Uint8ClampedArray lanes (the engine clamps each byte store):
 * kept as the measured alternative in tests/bench/pixels.ts. `scratch` holds one mapped channel.
 */
export function compositeAddClampedLanes(channels: readonly CompositeChannel[], out: Uint32Array, scratch = new Uint32Array(out.length)): Uint32Array {
  const n = check(channels, out);
  const outBytes = new Uint8ClampedArray(out.buffer, out.byteOffset, n * 4);
  const scratchBytes = new Uint8Array(scratch.buffer, scratch.byteOffset, n * 4);
  const [{ pixels: p0, rgbaLut: l0 }] = channels;
  for (let i = 0; i < n; i++) out[i] = l0[p0[i]];
  for (let c = 1; c < channels.length; c++) {
    const { pixels, rgbaLut } = channels[c];
    for (let i = 0; i < n; i++) scratch[i] = rgbaLut[pixels[i]];
    for (let j = 0; j < n * 4; j++) outBytes[j] = outBytes[j] + scratchBytes[j];
  }
  return out;
}
