// Display mapping of raw counts: linear between the black and the white point, clamped to 0…255.
// Only the display changes; the raw values are read, never written.

export interface ChannelMapping {
  black: number;
  white: number;
  /** Display colour as [r, g, b] in 0…255; a single-hue ramp from black to this colour. */
  colour: [number, number, number];
}

/** Maps raw values to 8-bit display levels: black point → 0, white point → 255, linear between. */
export function mapToLevels(pixels: ArrayLike<number>, black: number, white: number, out = new Uint8Array(pixels.length)): Uint8Array {
  const span = Math.max(white - black, 1e-9);
  const scale = 255 / span;
  for (let i = 0; i < pixels.length; i++) {
    const level = (pixels[i] - black) * scale;
    out[i] = level <= 0 ? 0 : level >= 255 ? 255 : Math.round(level);
  }
  return out;
}

/** Additive composite (clamped) of several mapped channels into RGBA. */
export function compositeAdditive(channels: { pixels: ArrayLike<number>; mapping: ChannelMapping }[], length: number): Uint8ClampedArray {
  const rgba = new Uint8ClampedArray(length * 4);
  const sum = new Float32Array(length * 3);
  const levels = new Uint8Array(length);
  for (const { pixels, mapping } of channels) {
    mapToLevels(pixels, mapping.black, mapping.white, levels);
    const [r, g, b] = mapping.colour;
    for (let i = 0; i < length; i++) {
      const l = levels[i] / 255;
      sum[i * 3] += l * r;
      sum[i * 3 + 1] += l * g;
      sum[i * 3 + 2] += l * b;
    }
  }
  for (let i = 0; i < length; i++) {
    rgba[i * 4] = sum[i * 3];
    rgba[i * 4 + 1] = sum[i * 3 + 1];
    rgba[i * 4 + 2] = sum[i * 3 + 2];
    rgba[i * 4 + 3] = 255;
  }
  return rgba;
}

/** Box-filter downscale of RGBA to fit within `maxSide` pixels (thumbnails). */
export function downscaleRgba(rgba: Uint8ClampedArray, width: number, height: number, maxSide: number) {
  const factor = Math.max(1, Math.ceil(Math.max(width, height) / maxSide));
  const w = Math.max(1, Math.floor(width / factor));
  const h = Math.max(1, Math.floor(height / factor));
  const out = new Uint8ClampedArray(w * h * 4);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      for (let k = 0; k < 4; k++) {
        let s = 0;
        for (let dy = 0; dy < factor; dy++) for (let dx = 0; dx < factor; dx++) s += rgba[((y * factor + dy) * width + x * factor + dx) * 4 + k];
        out[(y * w + x) * 4 + k] = s / (factor * factor);
      }
    }
  }
  return { rgba: out, width: w, height: h };
}
