import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { ceilingFor, isLeftJustified } from "@/lib/imaging/ceiling";
import { histogram16, mergeHistograms, statsFromHistogram } from "@/lib/imaging/histogram";
import { fileSource } from "@/lib/tiff/file-source";
import { parseOmeXml } from "@/lib/tiff/ome";
import { readTiffStructure } from "@/lib/tiff/structure";
import { loadStackFixture, type StackFixture } from "./stack-fixture";

describe("ceilingFor", () => {
  test("uses OME-XML SignificantBits: 12 bits gives 4095 (FACTS.md, OME schema 2016-06)", () => {
    expect(ceilingFor({ significantBits: 12, max: 100 })).toEqual({ ceiling: 4095, bits: 12, from: "significant-bits" });
  });

  test.each([
    [0, 255, 8],
    [255, 255, 8],
    [256, 1023, 10],
    [4095, 4095, 12],
    [4096, 16383, 14],
    [16384, 65535, 16],
  ])("without SignificantBits, maximum %i gives the smallest common depth's ceiling %i (common practice)", (max, ceiling, bits) => {
    expect(ceilingFor({ max })).toEqual({ ceiling, bits, from: "maximum" });
  });

  test("refuses a maximum beyond 16 bits", () => {
    expect(() => ceilingFor({ max: 70000 })).toThrow(/exceeds 16 bits/);
  });
});

describe("ceiling and left justification on the seeded stack", () => {
  let fx: StackFixture;
  beforeAll(() => {
    fx = loadStackFixture();
  });
  afterAll(() => fx.remove());

  test("takes the ceiling from the file's OME-XML and counts numpy's saturated pixels there", async () => {
    const src = await fileSource(fx.omePath);
    const { ifds } = await readTiffStructure(src);
    await src.close();
    const image = parseOmeXml(ifds[0].imageDescription ?? "").images[0];
    const h = mergeHistograms(fx.planes.map((p) => histogram16(p)));
    const { ceiling } = ceilingFor({ significantBits: image.significantBits, max: statsFromHistogram(h).max });
    expect(ceiling).toBe(4095);
    expect(statsFromHistogram(h, ceiling).countAtCeiling).toBe(fx.ref.all.countAt4095);
  });

  test("recognises 12-bit data shifted to the top of 16 bits (multiples of 2^4, FACTS.md)", () => {
    // numpy wrote planes << 4 (tests/fixtures/make_tiffs.py).
    const shifted = histogram16(fx.leftJustified);
    expect(isLeftJustified(shifted, 12)).toBe(true);
    expect(isLeftJustified(histogram16(fx.planes[0]), 12)).toBe(false);
    expect(ceilingFor({ max: statsFromHistogram(shifted).max }).bits).toBe(16);
  });

  test("gives no verdict for a plane without a non-zero value", () => {
    expect(isLeftJustified(new Uint32Array(65536), 12)).toBe(false);
  });
});
