import { readFileSync } from "node:fs";
import { resolve } from "node:path";
import { interpolateViridis } from "d3-scale-chromatic";
import { describe, expect, test } from "vitest";
import { deltaE2000, minPairDistance, CVD_WARNING_THRESHOLD } from "@/lib/imaging/colour-difference";
import { builtInTables, CHANNEL_COLOUR_SETS, findTable, greyTable, OKABE_ITO_COLOURS, parseHex, safeChannelColours, singleHueTable, tableEntry, toHex } from "@/lib/imaging/colour-tables";
import { OKABE_ITO } from "@/lib/imaging/palettes";

const ref = (name: string) => JSON.parse(readFileSync(resolve(import.meta.dirname, "../../../shared/reference", name), "utf8"));
type Sample = { listedIndex: number; matplotlib_8bit: [number, number, number]; pnnl_txt_8bit?: [number, number, number] };
const maps = ref("colormaps_viridis_cividis.json") as { samples: Record<"viridis" | "cividis", Sample[]> };
const okabe = ref("okabe_ito_palette.json") as { colors: { key: string; hex: string; rgb255: number[] }[] };

describe("built-in colour tables", () => {
  test("every table has 256 RGB entries, a unique id and a kind", () => {
    const ids = new Set(builtInTables.map((t) => t.id));
    expect(ids.size).toBe(builtInTables.length);
    for (const t of builtInTables) {
      expect(t.rgb.length).toBe(768);
      expect(["grey", "single-hue", "perceptual"]).toContain(t.kind);
    }
    expect(builtInTables.filter((t) => t.kind === "perceptual").map((t) => t.id).sort()).toEqual(["cividis", "inferno", "magma", "plasma", "viridis"]);
  });

  test("grey shows each level unchanged", () => {
    const g = greyTable();
    for (let i = 0; i < 256; i++) expect(tableEntry(g, i)).toEqual([i, i, i]);
  });

  test("a single-hue ramp runs from black to the channel colour, round(colour · i / 255)", () => {
    const t = singleHueTable("#E69F00");
    expect(tableEntry(t, 0)).toEqual([0, 0, 0]);
    expect(tableEntry(t, 255)).toEqual([230, 159, 0]);
    // 230 · 128 / 255 = 115.45 → 115; 159 · 128 / 255 = 79.81 → 80.
    expect(tableEntry(t, 128)).toEqual([115, 80, 0]);
  });

  test("viridis equals the published table at the sampled rows (Smith & van der Walt 2015, matplotlib _viridis_data, 8-bit round(v·255))", () => {
    const v = findTable("viridis")!;
    for (const s of maps.samples.viridis) expect(tableEntry(v, s.listedIndex), `row ${s.listedIndex}`).toEqual(s.matplotlib_8bit);
  });

  test("viridis row i is d3-scale-chromatic's row i for all 256 rows (d3 ships the published list; reference JSON cross-check 256/256)", () => {
    const v = findTable("viridis")!;
    // (i + 0.5)/256 is the centre of d3's row i: an independent way to pick the same row.
    for (let i = 0; i < 256; i++) expect(toHex(tableEntry(v, i))).toBe(interpolateViridis((i + 0.5) / 256).toUpperCase());
  });

  test("cividis, from d3's polynomial approximation, stays within 3 ΔE00 of both published tables (Nuñez, Anderton & Renslow 2018)", () => {
    // Documented choice in colour-tables.ts: the reference JSON measured up to ~2.65 ΔE00 between d3 and the tables.
    const c = findTable("cividis")!;
    for (const s of maps.samples.cividis) {
      expect(deltaE2000(tableEntry(c, s.listedIndex), s.matplotlib_8bit), `matplotlib row ${s.listedIndex}`).toBeLessThan(3);
      expect(deltaE2000(tableEntry(c, s.listedIndex), s.pnnl_txt_8bit!), `pnnl row ${s.listedIndex}`).toBeLessThan(3);
    }
  });
});

describe("channel colours", () => {
  test("the Okabe & Ito colours equal the published values (Okabe & Ito 2008, reference JSON)", () => {
    const byKey = Object.fromEntries(okabe.colors.map((c) => [c.key.toLowerCase(), c]));
    for (const [key, hex] of Object.entries(OKABE_ITO_COLOURS)) {
      const published = byKey[key.toLowerCase()];
      expect(published, key).toBeDefined();
      expect(hex.toUpperCase()).toBe(published.hex.toUpperCase());
      expect(parseHex(hex)).toEqual(published.rgb255);
    }
    // The older palettes.ts (ingest defaults) must carry the same values.
    for (const [key, hex] of Object.entries(OKABE_ITO)) expect(hex).toBe(OKABE_ITO_COLOURS[key as keyof typeof OKABE_ITO_COLOURS]);
  });

  test("two channels get magenta/green (Wong 2011, Nature Methods 8:441)", () => {
    expect(CHANNEL_COLOUR_SETS[2]).toEqual(["#FF00FF", "#00FF00"]);
  });

  test.each([2, 3, 4] as const)("the %i-channel set stays above the CVD warning threshold under every simulation (Machado et al. 2009)", (n) => {
    const d = minPairDistance(CHANNEL_COLOUR_SETS[n]);
    expect(d.distance).toBeGreaterThanOrEqual(CVD_WARNING_THRESHOLD);
    expect(Object.keys(d.byVision).sort()).toEqual(["deuteranopia", "normal", "protanopia", "tritanopia"]);
  });

  test("safe colours repeat the 4-set beyond four channels and use white for one", () => {
    expect(safeChannelColours(1)).toEqual(["#FFFFFF"]);
    expect(safeChannelColours(6)).toEqual([...CHANNEL_COLOUR_SETS[4], ...CHANNEL_COLOUR_SETS[4].slice(0, 2)]);
  });

  test("parseHex refuses malformed colours instead of returning black", () => {
    expect(() => parseHex("#12345")).toThrow(RangeError);
    expect(() => parseHex("red")).toThrow(RangeError);
  });
});
