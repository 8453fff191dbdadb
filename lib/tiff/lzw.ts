import { TiffFormatError } from "./structure";

const CLEAR = 256;
const END = 257;

/**
 * TIFF LZW (TIFF 6.0, Adobe 1992, section 13): codes MSB-first, 9 to 12 bits wide, widening one code
 * early (when the next free code reaches 2^width − 1, as libtiff's decoder does). Writes straight into
 * a typed array; geotiff's decoder builds JavaScript arrays and was ~100× slower on a 2048² plane.
 */
export function lzwDecode(input: Uint8Array, expectedLength: number): Uint8Array {
  const prefix = new Uint16Array(4096);
  const suffix = new Uint8Array(4096);
  const first = new Uint8Array(4096);
  const length = new Uint16Array(4096);
  for (let i = 0; i < 256; i++) {
    suffix[i] = i;
    first[i] = i;
    length[i] = 1;
  }
  const out = new Uint8Array(expectedLength);
  const totalBits = input.length * 8;
  let o = 0;
  let bit = 0;
  let width = 9;
  let next = 258;
  let old = -1;

  // Writes the string for `code` at out[o…], truncated at the end of the block.
  const emit = (code: number): void => {
    const len = length[code];
    let end = o + len;
    let c = code;
    // Walk back along the prefix chain; characters beyond the block end are skipped.
    while (end > expectedLength) {
      c = prefix[c];
      end--;
    }
    for (let k = end - 1; k >= o; k--) {
      out[k] = suffix[c];
      c = prefix[c];
    }
    o += len;
  };

  while (o < expectedLength && bit + width <= totalBits) {
    const at = bit >>> 3;
    const window = (input[at] << 16) | ((input[at + 1] ?? 0) << 8) | (input[at + 2] ?? 0);
    const code = (window >>> (24 - (bit & 7) - width)) & ((1 << width) - 1);
    bit += width;
    if (code === END) break;
    if (code === CLEAR) {
      width = 9;
      next = 258;
      old = -1;
      continue;
    }
    if (old === -1) {
      if (code > 255) throw new TiffFormatError(`LZW data starts with code ${code} after a clear code (damaged data?)`);
      out[o++] = code;
      old = code;
      continue;
    }
    const known = code < next;
    if (!known && (code !== next || next >= 4096)) {
      throw new TiffFormatError(`LZW code ${code} is not yet defined (next is ${next}; damaged data?)`);
    }
    if (known) emit(code);
    if (next < 4096) {
      // New entry: the previous string plus the first character of this one (for the KwKwK case,
      // code === next, that character is the previous string's own first character).
      prefix[next] = old;
      suffix[next] = known ? first[code] : first[old];
      first[next] = first[old];
      length[next] = length[old] + 1;
      next++;
    }
    if (!known) emit(code);
    if (next >= (1 << width) - 1 && width < 12) width++;
    old = code;
  }
  return o >= expectedLength ? out : out.slice(0, o);
}
