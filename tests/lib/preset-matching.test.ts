import { describe, expect, it } from "vitest";
import { matchPresetChannels } from "@/lib/client/presets";
import type { PresetChannel } from "@/lib/schemas/preset";

const ch = (match: PresetChannel["match"]): PresetChannel => ({ match, visible: true, colour: "#ff00ff", tableId: null, gamma: 1, range: { mode: "counts", black: 0, white: 100 } });

describe("matching preset channels to a dataset's channels", () => {
  it("prefers the channel name, then the emission wavelength, then the index", () => {
    const dataset = [
      { c: 0, name: "membrane", emissionNm: 510 },
      { c: 1, name: "Nuclei", emissionNm: 461 },
      { c: 2, name: "mito", emissionNm: 590 },
    ];
    const { pairs, unmatched } = matchPresetChannels([ch({ name: "nuclei", index: 0 }), ch({ name: "other", emissionNm: 590, index: 1 }), ch({ index: 0 })], dataset);
    expect(pairs.map((p) => [p.c, p.by])).toEqual([
      [1, "name"],
      [2, "emission"],
      [0, "index"],
    ]);
    expect(unmatched).toEqual([]);
  });

  it("reports preset channels that match nothing instead of reusing a channel twice", () => {
    const { pairs, unmatched } = matchPresetChannels([ch({ name: "a", index: 0 }), ch({ name: "b", index: 0 })], [{ c: 0, name: "x", emissionNm: null }]);
    expect(pairs.map((p) => p.c)).toEqual([0]);
    expect(unmatched).toHaveLength(1);
  });
});
