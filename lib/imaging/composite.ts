// Composites of mapped channels. Each channel brings its raw pixels and its fused rgbaLut
// (lut.ts), so a composite is a few table lookups per pixel and a per-byte combine, done on
// packed 32-bit words (four 8-bit lanes R, G, B, A) without branches. Loops run on Int32 views of
// the same memory: packed words with alpha 255 exceed 2³¹, and int32 values stay unboxed in V8.

import { LITTLE_ENDIAN } from "./lut";
import { wasmComposite } from "./wasm/kernels";

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
 * Additive composite, clamped per colour component at 255: for each pixel the sum of every
 * channel's mapped colour (alpha likewise, so opaque tables give alpha 255). 1–4 channels run in
 * the WebAssembly kernels (wasm/kernels.ts) where they can; without them, 2–4 channels of 16-bit
 * pixels take the spread-field path below; other cases (8-bit pixels, 5+ channels, planes not on a
 * 4-byte boundary, translucent tables, big-endian hosts) one pass for 1–3 channels (unrolled) or
 * one channel at a time, with the packed saturating add. Both give the same words.
 */
export function compositeAdd(channels: readonly CompositeChannel[], out: Uint32Array): Uint32Array {
  const n = check(channels, out);
  if (wasmComposite("add", channels, out)) return out;
  if (compositeAddSpread(channels, out, n)) return out;
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

// The spread-field additive composite. Each channel's rgbaLut is rewritten once per call as
// r | g << 10 | b << 20 ("spread": 10 bits per colour component), so the sum of up to four channels'
// entries is a plain integer add with no carry between components (4 × 255 = 1020 < 1024). One
// branch-free step per pixel then clamps each component at 255 and packs R, G, B, A. Pixels are
// read two per 32-bit word, and the loops are separate functions taking every array as a
// parameter, which V8 compiles to much tighter code than the same loop inline (about 0.55× the
// time of the packed path on a 3-channel 2048² plane, tests/bench/pixels.ts). Word reads put pixel
// 2k in the low half, and the packing writes R in the low byte, only on a little-endian host (every
// current browser platform); elsewhere the packed path runs.
const LUT = 65536;
/**
 * The lowest bit of each 10-bit component field. For a spread sum s, ((s >> 8) | (s >> 9)) & FIELD
 * has a 1 in the fields whose component passed 255 (bit 8 or 9 set), and 255 times that, an 8-bit
 * mask of ones in those fields, OR-ed into s saturates them.
 */
const FIELD = 1 | (1 << 10) | (1 << 20);
/**
 * 256 in every field. With two or three channels the first channel's spread table carries it, so a
 * field holds sum + 256 ≤ 3 × 255 + 256 = 1021 < 1024: its bit 9 alone says the sum passed 255
 * (sum + 256 ≥ 512), and its low 8 bits are the sum's. That saves two operations per pixel over
 * the bit 8 | bit 9 test, which four channels (up to 1020 + 256, past the field) still need.
 */
const BIAS = 256 | (256 << 10) | (256 << 20);
/** Opaque alpha as int32 (packed words are little-endian R, G, B, A; see LITTLE_ENDIAN in lut.ts). */
const ALPHA = 0xff000000 | 0;

/**
 * The spread tables, 4 × 65,536 entries reused from call to call (a render runs on every change of
 * view). A plain array of small integers, not an Int32Array: once any ArrayBuffer in the process
 * has been transferred (the bench worker transfers every rendered frame; the checks also show under
 * tsx), V8's optimised code checks before every typed-array read that its buffer was not detached,
 * and plain arrays skip that check: 70 instead of 80 machine instructions per pixel in the 3-channel
 * loop (V8 11.3). Every entry stays below 2³⁰ (at most 511 · (1 + 2¹⁰ + 2²⁰) with the bias), a small
 * integer ("Smi") even in builds with 31-bit ones, so the array keeps its packed small-integer form.
 */
const spreadScratch: number[] = [];

/** Clamps each field of a spread sum (no bias) at 255 and packs it as an opaque little-endian RGBA word (int32). */
function packSpread(s: number): number {
  const over = ((s >> 8) | (s >> 9)) & FIELD;
  const sat = s | ((over << 8) - over);
  return (sat & 0xff) | ((sat >> 2) & 0xff00) | ((sat >> 4) & 0xff0000) | ALPHA;
}

/** packSpread for a sum that carries BIAS once: bit 9 of a field marks a sum past 255. V8 inlines it. */
function packBiased(s: number): number {
  const over = (s >> 9) & FIELD;
  const sat = s | ((over << 8) - over);
  return (sat & 0xff) | ((sat >> 2) & 0xff00) | ((sat >> 4) & 0xff0000) | ALPHA;
}

/**
 * Runs the spread path when it applies and returns true; false leaves the work to the packed path.
 * Every lookup table must be 65,536 entries of packed RGBA; the result's alpha is 255 everywhere,
 * which is the saturated sum of the channels' alphas when at least one table is fully opaque (as
 * buildRgbaLut and the clipping marks make them). When every channel's table has some translucent
 * entry, the packed path runs instead: it adds alpha like any other component.
 */
function compositeAddSpread(channels: readonly CompositeChannel[], out: Uint32Array, n: number): boolean {
  const k = channels.length;
  if (!LITTLE_ENDIAN || k < 2 || k > 4) return false;
  for (const c of channels) if (!(c.pixels instanceof Uint16Array) || c.pixels.byteOffset % 4 !== 0) return false;
  const lut = spreadScratch;
  // Filled with zeros by push once, so the array is packed small integers from the start.
  while (lut.length < 4 * LUT) lut.push(0);
  const biased = k <= 3;
  let opaque = false;
  for (let c = 0; c < k; c++) opaque = spreadLut(i32(channels[c].rgbaLut), lut, c * LUT, c === 0 && biased ? BIAS : 0) || opaque;
  if (!opaque) return false;
  const words = (c: number) => new Int32Array(channels[c].pixels.buffer, channels[c].pixels.byteOffset, n >> 1);
  const o = new Int32Array(out.buffer, out.byteOffset, n);
  const pairs = n >> 1;
  if (k === 2) add2(o, words(0), words(1), lut, pairs);
  else if (k === 3) add3(o, words(0), words(1), words(2), lut, pairs);
  else add4(o, words(0), words(1), words(2), words(3), lut, pairs);
  if (n & 1) {
    // The last pixel of an odd-length plane (no whole word holds it).
    let s = 0;
    for (let c = 0; c < k; c++) s += lut[c * LUT + channels[c].pixels[n - 1]];
    o[n - 1] = biased ? packBiased(s) : packSpread(s);
  }
  return true;
}

/**
 * Writes the spread form of a packed RGBA table (65,536 entries) at `at` in `into`, plus `bias` in
 * every entry; true when every entry is opaque.
 */
function spreadLut(l: Int32Array, into: number[], at: number, bias: number): boolean {
  let alpha = -1;
  for (let v = 0; v < LUT; v++) {
    const x = l[v];
    alpha &= x;
    into[at + v] = ((x & 0xff) | ((x & 0xff00) << 2) | ((x & 0xff0000) << 4)) + bias;
  }
  return alpha >>> 24 === 255;
}

// The three loops differ only in the number of channels; table c starts at c · 65,536 in `lut`.
// add2 and add3 read four words (eight pixels) per plane per step and pack through packBiased (the
// first table carries BIAS); add4 reads one word per plane (fewer live values). In add2/add3,
// offsets are written (k + 1) | 0: the truncating add drops V8's overflow check on each index, and
// calling the small pack function (inlined) instead of spelling the steps out left V8 fewer values
// to keep on the stack. With the bias and the plain-array tables: 72 instead of 90 machine
// instructions per pixel and 0.84–0.92× the CPU time of the previous two-word loop (V8 11.3).
function add2(o: Int32Array, w0: Int32Array, w1: Int32Array, lut: number[], pairs: number): void {
  let k = 0;
  let j = 0;
  for (; k + 3 < pairs; k += 4, j += 8) {
    const a0 = w0[k];
    const b0 = w1[k];
    const a1 = w0[(k + 1) | 0];
    const b1 = w1[(k + 1) | 0];
    const a2 = w0[(k + 2) | 0];
    const b2 = w1[(k + 2) | 0];
    const a3 = w0[(k + 3) | 0];
    const b3 = w1[(k + 3) | 0];
    o[j] = packBiased(lut[a0 & 0xffff] + lut[LUT + (b0 & 0xffff)]);
    o[(j + 1) | 0] = packBiased(lut[a0 >>> 16] + lut[LUT + (b0 >>> 16)]);
    o[(j + 2) | 0] = packBiased(lut[a1 & 0xffff] + lut[LUT + (b1 & 0xffff)]);
    o[(j + 3) | 0] = packBiased(lut[a1 >>> 16] + lut[LUT + (b1 >>> 16)]);
    o[(j + 4) | 0] = packBiased(lut[a2 & 0xffff] + lut[LUT + (b2 & 0xffff)]);
    o[(j + 5) | 0] = packBiased(lut[a2 >>> 16] + lut[LUT + (b2 >>> 16)]);
    o[(j + 6) | 0] = packBiased(lut[a3 & 0xffff] + lut[LUT + (b3 & 0xffff)]);
    o[(j + 7) | 0] = packBiased(lut[a3 >>> 16] + lut[LUT + (b3 >>> 16)]);
  }
  for (; k < pairs; k++, j += 2) {
    const a = w0[k];
    const b = w1[k];
    o[j] = packBiased(lut[a & 0xffff] + lut[LUT + (b & 0xffff)]);
    o[j + 1] = packBiased(lut[a >>> 16] + lut[LUT + (b >>> 16)]);
  }
}

function add3(o: Int32Array, w0: Int32Array, w1: Int32Array, w2: Int32Array, lut: number[], pairs: number): void {
  let k = 0;
  let j = 0;
  for (; k + 3 < pairs; k += 4, j += 8) {
    const a0 = w0[k];
    const b0 = w1[k];
    const c0 = w2[k];
    const a1 = w0[(k + 1) | 0];
    const b1 = w1[(k + 1) | 0];
    const c1 = w2[(k + 1) | 0];
    const a2 = w0[(k + 2) | 0];
    const b2 = w1[(k + 2) | 0];
    const c2 = w2[(k + 2) | 0];
    const a3 = w0[(k + 3) | 0];
    const b3 = w1[(k + 3) | 0];
    const c3 = w2[(k + 3) | 0];
    o[j] = packBiased(lut[a0 & 0xffff] + lut[LUT + (b0 & 0xffff)] + lut[2 * LUT + (c0 & 0xffff)]);
    o[(j + 1) | 0] = packBiased(lut[a0 >>> 16] + lut[LUT + (b0 >>> 16)] + lut[2 * LUT + (c0 >>> 16)]);
    o[(j + 2) | 0] = packBiased(lut[a1 & 0xffff] + lut[LUT + (b1 & 0xffff)] + lut[2 * LUT + (c1 & 0xffff)]);
    o[(j + 3) | 0] = packBiased(lut[a1 >>> 16] + lut[LUT + (b1 >>> 16)] + lut[2 * LUT + (c1 >>> 16)]);
    o[(j + 4) | 0] = packBiased(lut[a2 & 0xffff] + lut[LUT + (b2 & 0xffff)] + lut[2 * LUT + (c2 & 0xffff)]);
    o[(j + 5) | 0] = packBiased(lut[a2 >>> 16] + lut[LUT + (b2 >>> 16)] + lut[2 * LUT + (c2 >>> 16)]);
    o[(j + 6) | 0] = packBiased(lut[a3 & 0xffff] + lut[LUT + (b3 & 0xffff)] + lut[2 * LUT + (c3 & 0xffff)]);
    o[(j + 7) | 0] = packBiased(lut[a3 >>> 16] + lut[LUT + (b3 >>> 16)] + lut[2 * LUT + (c3 >>> 16)]);
  }
  for (; k < pairs; k++, j += 2) {
    const a = w0[k];
    const b = w1[k];
    const c = w2[k];
    o[j] = packBiased(lut[a & 0xffff] + lut[LUT + (b & 0xffff)] + lut[2 * LUT + (c & 0xffff)]);
    o[j + 1] = packBiased(lut[a >>> 16] + lut[LUT + (b >>> 16)] + lut[2 * LUT + (c >>> 16)]);
  }
}

function add4(o: Int32Array, w0: Int32Array, w1: Int32Array, w2: Int32Array, w3: Int32Array, lut: number[], pairs: number): void {
  for (let k = 0; k < pairs; k++) {
    const a = w0[k];
    const b = w1[k];
    const c = w2[k];
    const d = w3[k];
    const lo = lut[a & 0xffff] + lut[LUT + (b & 0xffff)] + lut[2 * LUT + (c & 0xffff)] + lut[3 * LUT + (d & 0xffff)];
    const hi = lut[a >>> 16] + lut[LUT + (b >>> 16)] + lut[2 * LUT + (c >>> 16)] + lut[3 * LUT + (d >>> 16)];
    let over = ((lo >> 8) | (lo >> 9)) & FIELD;
    const x = lo | ((over << 8) - over);
    over = ((hi >> 8) | (hi >> 9)) & FIELD;
    const y = hi | ((over << 8) - over);
    o[2 * k] = (x & 0xff) | ((x >> 2) & 0xff00) | ((x >> 4) & 0xff0000) | ALPHA;
    o[2 * k + 1] = (y & 0xff) | ((y >> 2) & 0xff00) | ((y >> 4) & 0xff0000) | ALPHA;
  }
}

/** Maximum composite: each colour component is the largest over the channels (alpha stays 255). */
export function compositeMax(channels: readonly CompositeChannel[], out: Uint32Array): Uint32Array {
  const n = check(channels, out);
  if (wasmComposite("max", channels, out)) return out;
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
