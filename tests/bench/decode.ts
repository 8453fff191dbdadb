/**
 * Decoding one 2048 × 2048 16-bit plane the way the bench worker does (decodePlane over an in-memory
 * source; geotiff's JavaScript inflate for Deflate as in the browser, our LZW decoder), for an
 * uncompressed, a Deflate + predictor and an LZW file (issue 4, "Speed": "decode uncompressed, Deflate
 * and LZW"). Each against (a) the obvious way to read a TIFF in JavaScript, geotiff's own
 * `readRasters` on the same file, and (b) the memory floor, Uint16Array.set of the decoded plane.
 * The LZW file is written by libtiff's tiffcp (Debian libtiff-tools), an encoder independent of ours;
 * every decode is checked to give the plane's exact values. Called from tests/bench/run.ts.
 */
import { execFileSync } from "node:child_process";
import { readFile, writeFile } from "node:fs/promises";
import { join } from "node:path";
import { deflateSync } from "node:zlib";
import { fromArrayBuffer } from "geotiff";
import { bufferSource } from "@/lib/tiff/byte-source";
import { decodePlane } from "@/lib/tiff/decode";
import { readTiffStructure } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";
import { ensureDebianPackages, findExecutable } from "@/scripts/lib/system";
import { ms as f, type Row } from "./row";

const now = () => performance.now();

async function medianMs(fn: () => unknown, runs: number): Promise<number> {
  await fn();
  const ms: number[] = [];
  for (let i = 0; i < runs; i++) {
    const t = now();
    await fn();
    ms.push(now() - t);
  }
  ms.sort((a, b) => a - b);
  return ms[ms.length >> 1];
}

const sameValues = (a: ArrayLike<number>, b: ArrayLike<number>) => a.length === b.length && Array.prototype.every.call(a, (v: number, i: number) => v === b[i]);

export async function decodeBenches(dir: string, plane: Uint16Array, side: number): Promise<Row[]> {
  const base = { width: side, height: side, bitsPerSample: 16 as const };
  const files: [string, Uint8Array][] = [
    ["uncompressed", await writeTiff([plane], base)],
    ["Deflate + predictor", await writeTiff([plane], { ...base, compression: "deflate", predictor: true, compress: (b) => deflateSync(b) })],
  ];
  if (!findExecutable("tiffcp")) ensureDebianPackages(["libtiff-tools"], "the LZW decode bench (files written by libtiff's tiffcp)");
  const plain = join(dir, "decode-plain.tif");
  const lzw = join(dir, "decode-lzw.tif");
  await writeFile(plain, files[0][1]);
  execFileSync("tiffcp", ["-c", "lzw", plain, lzw]);
  files.push(["LZW (written by tiffcp)", new Uint8Array(await readFile(lzw))]);

  const floorOut = new Uint16Array(plane.length);
  const floor = await medianMs(() => floorOut.set(plane), 7);
  const rows: Row[] = [];
  for (const [name, bytes] of files) {
    const source = bufferSource(bytes);
    const { ifds } = await readTiffStructure(source);
    const offset = ifds[0].offset;
    const ours = await decodePlane(source, offset);
    const buffer = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
    const geotiffRead = async () => {
      const image = await (await fromArrayBuffer(buffer)).getImage(0);
      return (await image.readRasters({ interleave: true })) as unknown as Uint16Array;
    };
    const identical = sameValues(ours.data, plane) && sameValues(await geotiffRead(), plane);
    const oursMs = await medianMs(() => decodePlane(source, offset), 7);
    const geotiffMs = await medianMs(geotiffRead, name.startsWith("LZW") ? 3 : 7);
    rows.push({
      bench: `decode one 2048² 16-bit plane, ${name} (${(bytes.length / 2 ** 20).toFixed(1)} MiB file)`,
      baseline: `geotiff readRasters ${f(geotiffMs)}; memory floor: Uint16Array.set ${f(floor)}`,
      measured: `decodePlane ${f(oursMs)}, ${(oursMs / floor).toFixed(1)}× the memory floor (values ${identical ? "identical" : "DIFFER"})`,
      ratio: oursMs / geotiffMs,
      target: "values identical to the plane written (issue 4 sets no decode time; ratio is vs geotiff)",
      met: identical,
    });
  }
  return rows;
}
