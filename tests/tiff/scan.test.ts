import { describe, expect, it } from "vitest";
import { bufferSource, type ByteSource } from "@/lib/tiff/byte-source";
import { decodePlane } from "@/lib/tiff/decode";
import { scanPlanes } from "@/lib/tiff/scan";
import { readTiffStructure } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";

const plane = (k: number) => Uint16Array.from({ length: 20 * 10 }, (_, i) => (i * 31 + k * 977) % 4096);

describe("scanPlanes", () => {
  it("yields every plane in order with the same values as decodePlane, reading one plane ahead", async () => {
    const bytes = await writeTiff([0, 1, 2, 3].map(plane), { width: 20, height: 10, bitsPerSample: 16 });
    const source = bufferSource(bytes);
    const structure = await readTiffStructure(source);
    let reads = 0;
    let readsWhenFirstYielded = -1;
    const counting: ByteSource = { size: source.size, read: (o, l, s) => (reads++, source.read(o, l, s)) };
    const seen: number[] = [];
    for await (const { index, ifd, plane: p } of scanPlanes(counting, structure, structure.ifds)) {
      if (index === 0) readsWhenFirstYielded = reads;
      seen.push(index);
      expect(Array.from(p.data)).toEqual(Array.from((await decodePlane(source, ifd.offset)).data));
    }
    expect(seen).toEqual([0, 1, 2, 3]);
    // When plane 0 is handed over, the read of plane 1 has already been asked for.
    expect(readsWhenFirstYielded).toBeGreaterThan(1);
  });

  it("passes a damaged plane's error to the caller at that plane", async () => {
    const bytes = await writeTiff([0, 1].map(plane), { width: 20, height: 10, bitsPerSample: 16 });
    const structure = await readTiffStructure(bufferSource(bytes));
    const cut = bufferSource(bytes.slice(0, structure.ifds[1].layout.offsets[0] + 10));
    const got: number[] = [];
    await expect(
      (async () => {
        for await (const { index } of scanPlanes(cut, structure, structure.ifds)) got.push(index);
      })(),
    ).rejects.toBeInstanceOf(Error);
    expect(got).toEqual([0]);
  });
});
