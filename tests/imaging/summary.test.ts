import { describe, expect, it } from "vitest";
import { histogram16 } from "@/lib/imaging/histogram";
import { summarise, summariseForCeilings } from "@/lib/imaging/summary";
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
