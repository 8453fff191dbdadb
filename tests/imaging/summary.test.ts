import { describe, expect, it } from "vitest";
import { histogram16 } from "@/lib/imaging/histogram";
import { compactHistogram, summarise, summariseForCeilings } from "@/lib/imaging/summary";
import { rng } from "../helpers/rng";

describe("summariseForCeilings", () => {
  it("gives, for every candidate ceiling, exactly what summarise gives for that ceiling alone", () => {
    const random = rng(7);
    const pixels = Uint16Array.from({ length: 5000 }, () => Math.floor(random() * 4096));
    pixels[0] = 4095;
    pixels[1] = 1023;
    const hist = histogram16(pixels);
    const ceilings = [255, 1023, 4095, 16383, 65535];
    const all = summariseForCeilings(hist, ceilings);
    for (const ceiling of ceilings) expect(all.get(ceiling)).toEqual(summarise(hist, ceiling));
  });
});

describe("compactHistogram", () => {
  it("bin i holds the pixels with values i·binWidth … (i+1)·binWidth − 1, up to the ceiling, for any ceiling and bin count", () => {
    const random = rng(8);
    const pixels = Uint16Array.from({ length: 20_000 }, () => Math.floor(random() * 65536) >> Math.floor(random() * 8));
    pixels[0] = 65535;
    pixels[1] = 0;
    const hist = histogram16(pixels);
    for (const ceiling of [0, 1, 7, 255, 256, 1000, 4095, 65535, 70000]) {
      for (const bins of [1, 3, 256, 1000]) {
        const { binWidth, counts } = compactHistogram(hist, ceiling, bins);
        expect(binWidth).toBe(Math.max(1, Math.ceil((ceiling + 1) / bins)));
        // The definition, pixel by pixel: values above the ceiling are in no bin.
        const expected = new Array<number>(Math.ceil((ceiling + 1) / binWidth)).fill(0);
        for (const v of pixels) if (v <= ceiling) expected[Math.floor(v / binWidth)]++;
        expect(counts).toEqual(expected);
      }
    }
  });
});
