// Composites of mapped channels. Each channel brings its raw pixels and its fused rgbaLut
// (lut.ts), so a composite is a few table lookups per pixel and a per-byte combine, done on
// packed 32-bit words (four 8-bit lanes R, G, B, A) without branches. Loops run on Int32 views of
// the same memory: packed words with alpha 255 exceed 2³¹, and int32 values stay unboxed in V8.

export interface CompositeChannel {
  pixels: Uint16Array | Uint8Array;
  /** Raw value → packed RGBA (buildRgbaLut). */
  rgbaLut: Uint32Array;
}

const HIGH = 0x80808080 | 0;
const LOW7 = 0x7f7f7f7f;

/**
 * Per-lane saturating add of two packed words (each byte min(a + b, 255)), as int32 bits,
 * branch-free: add the low 7 bits of every lane (no carry can cross a lane), restore bit 7 by XOR,
 * take the carry out of bit 7 as the majority of a₇, b₇ and the carry into bit 7, and OR in 0xFF
 * for every lane that carried (Math.imul keeps the spread in int32).
 */
function addSat(a: number, b: number): number {
  const low = (a & LOW7) + (b & LOW7);
  const sum = low ^ ((a ^ b) & HIGH);
  const carry = ((a & b) | ((a ^ b) & low)) & HIGH;
  return sum | Math.imul(carry >>> 7, 0xff);
}

/**
 * Per-lane maximum as int32 bits, branch-free: (a | 0x80…) − (b & 0x7f…) has bit 7 set in a lane
 * where a's low 7 bits ≥ b's (no borrow crosses lanes); with the top bits this gives a mask of the
 * lanes where a ≥ b.
 */
function maxLane(a: number, b: number): number {
  const diff = (a | HIGH) - (b & LOW7);
  const ge = ((a & ~b) | (~(a ^ b) & diff)) & HIGH;
  const mask = Math.imul(ge >>> 7, 0xff);
  return (a & mask) | (b & ~mask);
}

/** Per-lane saturating add of two packed RGBA words, as an unsigned 32-bit value. */
export function addSaturate(a: number, b: number): number {
  return addSat(a, b) >>> 0;
}

/** Per-lane maximum of two packed RGBA words, as an unsigned 32-bit value. */
export function maxLanes(a: number, b: number): number {
  return maxLane(a, b) >>> 0;
}

const i32 = (a: Uint32Array) => new Int32Array(a.buffer, a.byteOffset, a.length);

function check(channels: readonly CompositeChannel[], out: Uint32Array): number {
  if (channels.length === 0) throw new RangeError("A composite needs at least one channel");
  const n = channels[0].pixels.length;
  for (const c of channels) {
    if (c.pixels.length !== n) throw new RangeError(`Channels differ in size (${c.pixels.length} vs ${n})`);
    if (c.rgbaLut.length < (c.pixels instanceof Uint8Array ? 256 : 65536)) throw new RangeError("rgbaLut is too short for these pixels");
  }
  if (out.length < n) throw new RangeError(`out holds ${out.length} pixels, need ${n}`);
  return n;
}

/**
 * Additive composite, clamped per colour component at 255 (alpha stays 255): for each pixel the
 * sum of every channel's mapped colour. One pass over the pixels for 1–3 channels (unrolled);
 * more channels add into `out` one channel at a time.
 */
export function compositeAdd(channels: readonly CompositeChannel[], out: Uint32Array): Uint32Array {
  const n = check(channels, out);
  const o = i32(out);
  const p0 = channels[0].pixels;
  const l0 = i32(channels[0].rgbaLut);
  if (channels.length === 2) {
    const p1 = channels[1].pixels;
    const l1 = i32(channels[1].rgbaLut);
    for (let i = 0; i < n; i++) o[i] = addSat(l0[p0[i]], l1[p1[i]]);
    return out;
  }
  if (channels.length === 3) {
    const p1 = channels[1].pixels;
    const l1 = i32(channels[1].rgbaLut);
    const p2 = channels[2].pixels;
    const l2 = i32(channels[2].rgbaLut);
    for (let i = 0; i < n; i++) o[i] = addSat(addSat(l0[p0[i]], l1[p1[i]]), l2[p2[i]]);
    return out;
  }
  for (let i = 0; i < n; i++) o[i] = l0[p0[i]];
  for (let c = 1; c < channels.length; c++) {
    const p = channels[c].pixels;
    const l = i32(channels[c].rgbaLut);
    for (let i = 0; i < n; i++) o[i] = addSat(o[i], l[p[i]]);
  }
  return out;
}

/** Maximum composite: each colour component is the largest over the channels (alpha stays 255). */
export function compositeMax(channels: readonly CompositeChannel[], out: Uint32Array): Uint32Array {
  const n = check(channels, out);
  const o = i32(out);
  const p0 = channels[0].pixels;
  const l0 = i32(channels[0].rgbaLut);
  if (channels.length === 3) {
    const p1 = channels[1].pixels;
    const l1 = i32(channels[1].rgbaLut);
    const p2 = channels[2].pixels;
    const l2 = i32(channels[2].rgbaLut);
    for (let i = 0; i < n; i++) o[i] = maxLane(maxLane(l0[p0[i]], l1[p1[i]]), l2[p2[i]]);
    return out;
  }
  for (let i = 0; i < n; i++) o[i] = l0[p0[i]];
  for (let c = 1; c < channels.length; c++) {
    const p = channels[c].pixels;
    const l = i32(channels[c].rgbaLut);
    for (let i = 0; i < n; i++) o[i] = maxLane(o[i], l[p[i]]);
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
