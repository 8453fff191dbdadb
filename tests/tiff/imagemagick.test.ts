// Files written by ImageMagick (Debian's imagemagick, an independent TIFF writer) decode to exactly the
// values that libtiff (tiffcp -c none) and then tifffile + numpy read from them (tifffile alone needs
// the imagecodecs package for LZW, which Debian's python3-tifffile lacks). Source for the formats:
// TIFF 6.0 (Adobe, 1992), compression 1 none, 5 LZW, 8 Deflate ("Zip"), Predictor 2.
import { readFileSync } from "node:fs";
import { afterAll, describe, expect, it } from "vitest";
import { bufferSource } from "@/lib/tiff/byte-source";
import { decodePlane } from "@/lib/tiff/decode";
import { readTiffStructure } from "@/lib/tiff/structure";
import { PYTHON, readU16le, run, tempDir, tiffcp } from "../helpers/tiff-tools";

// /usr/local/bin/convert on these machines can be a stand-in; the real ImageMagick is /usr/bin/convert.
const CONVERT = "/usr/bin/convert";
const tmp = tempDir("imagemagick");
afterAll(() => tmp.remove());

const cases: [name: string, options: string[]][] = [
  ["uncompressed", ["-compress", "None"]],
  ["LZW", ["-compress", "LZW"]],
  ["Deflate", ["-compress", "Zip"]],
  ["Deflate with horizontal predictor", ["-compress", "Zip", "-define", "tiff:predictor=2"]],
  ["LZW in 16×16 tiles", ["-compress", "LZW", "-define", "tiff:tile-geometry=16x16"]],
];

describe("TIFF files written by ImageMagick", () => {
  it.each(cases)("16-bit grey, %s: every value equals libtiff's and tifffile's reading", async (name, options) => {
    const path = tmp.path(`${name.replace(/\W+/g, "-")}.tif`);
    // A 97×61 gradient with a plasma-free noise term: odd sizes leave partial strips and tiles.
    run(CONVERT, ["-size", "97x61", "gradient:black-white", "-attenuate", "0.4", "+noise", "Uniform", "-depth", "16", "-define", "quantum:format=unsigned", "-type", "Grayscale", ...options, path]);
    const raw = tmp.path(`${name.replace(/\W+/g, "-")}.u16le`);
    const plain = tiffcp(path, tmp.path(`${name.replace(/\W+/g, "-")}.plain.tif`), ["-c", "none", "-s", "-r", "8"]);
    run(PYTHON, ["-c", `import tifffile, numpy as np; a = tifffile.imread(${JSON.stringify(plain)}); assert a.dtype == np.uint16, a.dtype; a.astype("<u2").tofile(${JSON.stringify(raw)}); print(a.shape)`]);
    const expected = readU16le(raw);

    const source = bufferSource(new Uint8Array(readFileSync(path)));
    const structure = await readTiffStructure(source);
    expect(structure.ifds).toHaveLength(1);
    const plane = await decodePlane(source, structure.ifds[0].offset);
    expect([plane.width, plane.height]).toEqual([97, 61]);
    expect(plane.data).toBeInstanceOf(Uint16Array);
    expect(Buffer.from(plane.data.buffer, plane.data.byteOffset, plane.data.byteLength).equals(Buffer.from(expected.buffer, expected.byteOffset, expected.byteLength))).toBe(true);
    // The gradient spans the range, so a decoder that returned zeros or one row could not pass.
    expect(Math.max(...expected)).toBeGreaterThan(60000);
  });
});
