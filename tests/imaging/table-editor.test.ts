import { readFileSync, writeFileSync } from "node:fs";
import { resolve } from "node:path";
import { converter, type Color } from "culori";
import { afterAll, describe, expect, test } from "vitest";
import { findTable, greyTable, type ColourTable } from "@/lib/imaging/colour-tables";
import { simulateCvdRgb } from "@/lib/imaging/cvd";
import {
  buildTableFromStops,
  checkLightness,
  cvdSafety,
  entryOf,
  hexStringToRgb,
  jsonValueLines,
  LIGHTNESS_TOLERANCE,
  lightnessProfile,
  parseTableCsv,
  parseTableJson,
  rgbToHexString,
  SAFE_STRIDE,
  SAFE_THRESHOLD,
  sampleStops,
  simulateTable,
  stopInterpolator,
  tableToCsv,
  tableToJson,
  type ColourStop,
} from "@/lib/imaging/table-editor";
import { PYTHON, run, tempDir } from "../helpers/tiff-tools";

const ref = (name: string) => JSON.parse(readFileSync(resolve(import.meta.dirname, "../../../shared/reference", name), "utf8"));
const srgbRef = ref("srgb_constants.json");

const table = (id: string): ColourTable => {
  const t = findTable(id);
  if (!t) throw new Error(`no built-in table ${id}`);
  return t;
};
const stops = (...colours: string[]): ColourStop[] => colours.map((colour, k) => ({ position: k / (colours.length - 1), colour }));
const redToGreen = () => buildTableFromStops(stops("#ff0000", "#00ff00"), "oklab").rgb;
// A "rainbow" in the usual order (blue, cyan, green, yellow, red): lightness peaks at yellow and falls to red.
const rainbow = () => buildTableFromStops(stops("#0000ff", "#00ffff", "#00ff00", "#ffff00", "#ff0000"), "oklab").rgb;

// sRGB decode (IEC 61966-2-1:1999) and CIE L* (CIE 15:2004) written out from the reference constants,
// independently of culori, as the check for what the library computes.
const tf = srgbRef.transfer_function.constants;
const decode = (c8: number) => {
  const c = c8 / 255;
  return c <= tf.decode_threshold ? c / tf.linear_slope : ((c + tf.offset_a) / tf.scale) ** tf.exponent;
};
const encode = (x: number) => (x <= tf.encode_threshold ? tf.linear_slope * x : tf.scale * x ** (1 / tf.exponent) - tf.offset_a);
const [yR, yG, yB] = srgbRef.matrix_linear_sRGB_to_XYZ_D65_CSSColor4_rational.decimal[1] as number[];
const EPSILON = srgbRef.cie_lab.epsilon.value as number;
const KAPPA = srgbRef.cie_lab.kappa.value as number;
const cieL = ([r, g, b]: readonly number[]) => {
  const y = yR * decode(r) + yG * decode(g) + yB * decode(b);
  return y > EPSILON ? 116 * Math.cbrt(y) - 16 : KAPPA * y;
};

describe("building a table from stops", () => {
  const oklab = converter("oklab");
  const lab65 = converter("lab65");
  const rgbOf = converter("rgb");
  const to8 = (c: Color) => {
    const x = rgbOf(c);
    return [x.r, x.g, x.b].map((v) => Math.round(255 * Math.min(1, Math.max(0, v))));
  };
  const sample = [0, 17, 64, 101, 102, 128, 200, 254, 255];
  const trio: ColourStop[] = [
    { position: 0, colour: "#1b2a5e" },
    { position: 0.4, colour: "#5f8f7a" },
    { position: 1, colour: "#f2d98c" },
  ];
  const mix = (a: number, b: number, w: number) => a + (b - a) * w;

  type LabLike = (c: string) => { l: number; a: number; b: number } | undefined;
  const spaces: [space: "oklab" | "cielab", conv: LabLike, mode: "oklab" | "lab65"][] = [
    ["oklab", (c) => oklab(c), "oklab"],
    ["cielab", (c) => lab65(c), "lab65"],
  ];
  for (const [space, conv, mode] of spaces) {
    test(`interpolates linearly in ${space} (culori ${mode}) between neighbouring stops, as computed by hand from culori's conversions`, () => {
      const built = buildTableFromStops(trio, space);
      // These three dull colours stay inside sRGB all along, so no entry is gamut-mapped.
      expect(built.gamutMapped).toEqual([]);
      for (const i of sample) {
        const t = i / 255;
        const [a, b] = t <= 0.4 ? [trio[0], trio[1]] : [trio[1], trio[2]];
        const w = (t - a.position) / (b.position - a.position);
        const ca = conv(a.colour)!;
        const cb = conv(b.colour)!;
        const expected = to8({ mode, l: mix(ca.l, cb.l, w), a: mix(ca.a, cb.a, w), b: mix(ca.b, cb.b, w) } as Color);
        expect([...entryOf(built.rgb, i)], `${space} entry ${i}`).toEqual(expected);
      }
    });
  }

  test("gives different tables for OKLab and CIELAB (the choice is not ignored)", () => {
    const a = buildTableFromStops(stops("#0000ff", "#ffffff"), "oklab").rgb;
    const b = buildTableFromStops(stops("#0000ff", "#ffffff"), "cielab").rgb;
    expect(rgbToHexString(a)).not.toBe(rgbToHexString(b));
    // Ends are the stop colours themselves in both.
    expect([...entryOf(a, 0), ...entryOf(a, 255)]).toEqual([0, 0, 255, 255, 255, 255]);
    expect([...entryOf(b, 0), ...entryOf(b, 255)]).toEqual([0, 0, 255, 255, 255, 255]);
  });

  test("culori's OKLab matches Ottosson (2020), 'A perceptual color space for image processing', table of XYZ/Oklab pairs (3 decimals)", () => {
    // Björn Ottosson's published test pairs (XYZ relative to D65, Y = 1 for white).
    const pairs: [number[], number[]][] = [
      [[0.95, 1.0, 1.089], [1.0, 0.0, 0.0]],
      [[1.0, 0.0, 0.0], [0.45, 1.236, -0.019]],
      [[0.0, 1.0, 0.0], [0.922, -0.671, 0.263]],
      [[0.0, 0.0, 1.0], [0.153, -1.415, -0.449]],
    ];
    for (const [[x, y, z], expected] of pairs) {
      const c = oklab({ mode: "xyz65", x, y, z })!;
      [c.l, c.a, c.b].forEach((v, k) => expect(Math.abs(v - expected[k]), `XYZ ${x},${y},${z} [${k}]`).toBeLessThan(2e-3));
    }
  });

  test("black to white in OKLab: entry i has Y = (i/255)³, since OKLab L = ∛Y for neutral colours (Ottosson 2020)", () => {
    const rgb = buildTableFromStops(stops("#000000", "#ffffff"), "oklab").rgb;
    for (let i = 0; i < 256; i++) {
      const expected = Math.round(255 * encode((i / 255) ** 3));
      const [r, g, b] = entryOf(rgb, i);
      expect(Math.abs(r - expected), `entry ${i}`).toBeLessThanOrEqual(1);
      expect(g).toBe(r);
      expect(b).toBe(r);
    }
  });

  test("black to white in CIELAB: entry i has L* = 100·i/255 (CIE 15:2004 inverse, constants of IEC 61966-2-1)", () => {
    const rgb = buildTableFromStops(stops("#000000", "#ffffff"), "cielab").rgb;
    for (let i = 0; i < 256; i++) {
      const L = (100 * i) / 255;
      const y = L > KAPPA * EPSILON ? ((L + 16) / 116) ** 3 : L / KAPPA;
      const expected = Math.round(255 * encode(y));
      expect(Math.abs(entryOf(rgb, i)[0] - expected), `entry ${i}`).toBeLessThanOrEqual(1);
    }
    // And so its L* profile is a straight line to within 8-bit rounding.
    const profile = lightnessProfile(rgb);
    for (let i = 0; i < 256; i++) expect(Math.abs(profile[i] - (100 * i) / 255), `L* ${i}`).toBeLessThan(0.5);
  });

  test("keeps stop order for equal positions, giving a sharp step", () => {
    const rgb = buildTableFromStops(
      [
        { position: 0, colour: "#000000" },
        { position: 0.5, colour: "#000000" },
        { position: 0.5, colour: "#ffffff" },
        { position: 1, colour: "#ffffff" },
      ],
      "oklab",
    ).rgb;
    expect([...entryOf(rgb, 127)]).toEqual([0, 0, 0]);
    expect([...entryOf(rgb, 128)]).toEqual([255, 255, 255]);
  });

  test("brings out-of-gamut colours inside by lowering chroma at constant lightness, and lists those entries", () => {
    const built = buildTableFromStops(stops("#0000ff", "#00ffff", "#00ff00", "#ffff00", "#ff0000"), "oklab");
    expect(built.gamutMapped.length).toBeGreaterThan(0);
    const at = stopInterpolator(stops("#0000ff", "#00ffff", "#00ff00", "#ffff00", "#ff0000"), "oklab");
    for (const i of built.gamutMapped) {
      const wanted = oklab(at(i / 255))!;
      const got = oklab({ mode: "rgb", r: built.rgb[3 * i] / 255, g: built.rgb[3 * i + 1] / 255, b: built.rgb[3 * i + 2] / 255 })!;
      // Lightness kept to 8-bit rounding; chroma lower than asked for.
      expect(Math.abs(got.l - wanted.l), `entry ${i} L`).toBeLessThan(0.01);
      expect(Math.hypot(got.a, got.b), `entry ${i} chroma`).toBeLessThan(Math.hypot(wanted.a, wanted.b));
    }
  });

  test("sampleStops gives evenly spaced stops from 0 to 1 with the table's own colours", () => {
    const s = sampleStops(table("viridis").rgb, 5);
    expect(s.map((x) => x.position)).toEqual([0, 64 / 255, 128 / 255, 191 / 255, 1]);
    expect(s[0].colour).toBe("#440154");
    expect(s[4].colour).toBe("#fde725");
  });
});

describe("lightness profile", () => {
  test("is CIE L* (D65) of each entry, as written out from IEC 61966-2-1 and CIE 15", () => {
    const viridis = table("viridis").rgb;
    const profile = lightnessProfile(viridis);
    for (let i = 0; i < 256; i++) expect(Math.abs(profile[i] - cieL(entryOf(viridis, i))), `entry ${i}`).toBeLessThan(1e-6);
  });

  test("matches the worked L* values of the reference (#FF0000 53.2371, #00FF00 87.7355, #0000FF 32.3009, #808080 53.585)", () => {
    const rgb = new Uint8Array(768);
    const rows = srgbRef.worked_examples_derived.rows as { srgb: string; lab_D65_own: number[] }[];
    rows.forEach((row, i) => rgb.set([1, 3, 5].map((k) => parseInt(row.srgb.slice(k, k + 2), 16)), 3 * i));
    const profile = lightnessProfile(rgb);
    rows.forEach((row, i) => expect(profile[i], row.srgb).toBeCloseTo(row.lab_D65_own[0], 3));
  });

  test("viridis rises monotonically; reversed, it falls", () => {
    const viridis = table("viridis").rgb;
    const up = checkLightness(lightnessProfile(viridis));
    expect(up.direction).toBe("rising");
    expect(up.first).toBeLessThan(up.last);
    const reversed = new Uint8Array(768);
    for (let i = 0; i < 256; i++) reversed.set(entryOf(viridis, 255 - i), 3 * i);
    expect(checkLightness(lightnessProfile(reversed)).direction).toBe("falling");
    expect(checkLightness(lightnessProfile(greyTable().rgb))).toMatchObject({ direction: "rising", worstReversal: null });
  });

  test("a rainbow-like table is not monotonic: L* falls by tens of units after yellow", () => {
    const check = checkLightness(lightnessProfile(rainbow()));
    expect(check.direction).toBe("neither");
    expect(check.worstReversal!.amount).toBeGreaterThan(30);
    // The peak is at the yellow stop (entry 191 = position 0.75).
    expect(Math.abs(check.worstReversal!.from - 191)).toBeLessThanOrEqual(2);
  });

  test("counts a slow decline against the running maximum, and allows wobbles up to the tolerance", () => {
    const line = (f: (i: number) => number) => Float64Array.from({ length: 256 }, (_, i) => f(i));
    // Falls 0.1 per entry for 50 entries in the middle: each step is tiny, the reversal is 5 L*.
    const slow = line((i) => (i < 100 ? i / 3 : i < 150 ? 33.3 - (i - 100) * 0.1 : 28.3 + (i - 150) / 2));
    expect(checkLightness(slow)).toMatchObject({ direction: "neither" });
    // From 33.3 at entry 100 down to 28.3 at entry 150.
    expect(checkLightness(slow).worstReversal).toMatchObject({ from: 100, to: 150 });
    expect(checkLightness(slow).worstReversal!.amount).toBeCloseTo(5, 6);
    const wobble = line((i) => i / 3 + (i === 100 ? -(LIGHTNESS_TOLERANCE - 0.1) - 1 / 3 : 0));
    expect(checkLightness(wobble).direction).toBe("rising");
    const dip = line((i) => i / 3 + (i === 100 ? -(LIGHTNESS_TOLERANCE + 0.1) - 1 / 3 : 0));
    expect(checkLightness(dip).direction).toBe("neither");
    expect(checkLightness(line(() => 50)).direction).toBe("neither");
  });
});

describe("colour-vision safe verdict", () => {
  test("simulateTable passes every entry through Machado et al. (2009) and keeps greys grey (matrix rows sum to 1)", () => {
    const viridis = table("viridis").rgb;
    const sim = simulateTable(viridis, "deuteranopia");
    for (const i of [0, 50, 128, 255]) expect([...entryOf(sim, i)]).toEqual([...simulateCvdRgb(entryOf(viridis, i), "deuteranopia")]);
    for (const kind of ["protanopia", "deuteranopia", "tritanopia"] as const) {
      const grey = simulateTable(greyTable().rgb, kind);
      for (let i = 0; i < 256; i++) for (const v of entryOf(grey, i)) expect(Math.abs(v - i), `${kind} ${i}`).toBeLessThanOrEqual(1);
    }
  });

  test(`grey and viridis are safe: every step of ${SAFE_STRIDE} entries is at least ${SAFE_THRESHOLD} ΔE00 apart under all four visions`, () => {
    for (const id of ["grey", "viridis"]) {
      const verdict = cvdSafety(table(id).rgb);
      expect(verdict.safe, id).toBe(true);
      expect(verdict.worst.distance).toBeGreaterThanOrEqual(SAFE_THRESHOLD);
      expect(Object.keys(verdict.byVision).sort()).toEqual(["deuteranopia", "normal", "protanopia", "tritanopia"]);
    }
    // Measured values quoted in the README and in table-editor.ts.
    expect(cvdSafety(table("grey").rgb).worst.distance).toBeCloseTo(6.72, 1);
    expect(cvdSafety(table("viridis").rgb).worst).toMatchObject({ vision: "protanopia" });
    expect(cvdSafety(table("viridis").rgb).worst.distance).toBeCloseTo(4.46, 1);
  });

  test("a red-to-green ramp is distinguishable with normal vision but not under deuteranopia", () => {
    const verdict = cvdSafety(redToGreen());
    expect(verdict.byVision.normal.distance).toBeGreaterThan(SAFE_THRESHOLD);
    expect(verdict.byVision.deuteranopia.distance).toBeLessThan(SAFE_THRESHOLD);
    expect(verdict.safe).toBe(false);
    expect(verdict.worst.vision).toBe("deuteranopia");
    expect(verdict.worst.distance).toBeCloseTo(1.99, 1);
  });

  test("a rainbow fails too, and the stride and threshold can be chosen", () => {
    expect(cvdSafety(rainbow()).safe).toBe(false);
    // With a stride of one entry nothing passes: neighbouring 8-bit entries are always close.
    expect(cvdSafety(greyTable().rgb, { stride: 1 }).safe).toBe(false);
    expect(() => cvdSafety(greyTable().rgb, { stride: 0 })).toThrow(RangeError);
  });
});

describe("CSV", () => {
  const tmp = tempDir("colour-csv");
  afterAll(() => tmp.remove());

  test("writes the header and 256 rows index,r,g,b, each ending in a line feed", () => {
    const csv = tableToCsv(table("viridis").rgb);
    const lines = csv.split("\n");
    expect(lines.length).toBe(258);
    expect(lines[0]).toBe("index,r,g,b");
    expect(lines[1]).toBe("0,68,1,84");
    expect(lines[256]).toBe("255,253,231,37");
    expect(lines[257]).toBe("");
  });

  test("round-trips byte for byte: import then export gives the same bytes, and the same entries", () => {
    for (const id of ["grey", "viridis", "magma"]) {
      const csv = tableToCsv(table(id).rgb);
      const parsed = parseTableCsv(csv);
      expect(parsed.ok).toBe(true);
      if (!parsed.ok) continue;
      expect(Buffer.from(parsed.value)).toEqual(Buffer.from(table(id).rgb));
      expect(Buffer.from(tableToCsv(parsed.value), "utf8")).toEqual(Buffer.from(csv, "utf8"));
    }
  });

  test("reads a table written by numpy (np.savetxt) and writes back exactly numpy's bytes", () => {
    const path = tmp.path("numpy.csv");
    const noHeader = tmp.path("numpy-no-header.csv");
    // An arbitrary table from numpy itself, so nothing of ours produced the file.
    run(PYTHON, [
      "-c",
      `import numpy as np
i = np.arange(256)
a = np.column_stack([i, (i * 7) % 256, 255 - i, (i * i) % 251])
np.savetxt(${JSON.stringify(path)}, a, fmt="%d", delimiter=",", header="index,r,g,b", comments="")
np.savetxt(${JSON.stringify(noHeader)}, a, fmt="%d", delimiter=",", newline="\\r\\n")`,
    ]);
    const bytes = readFileSync(path);
    const parsed = parseTableCsv(bytes.toString("utf8"));
    expect(parsed.ok).toBe(true);
    if (!parsed.ok) return;
    for (const i of [0, 1, 100, 255]) expect([...entryOf(parsed.value, i)]).toEqual([(i * 7) % 256, 255 - i, (i * i) % 251]);
    expect(Buffer.from(tableToCsv(parsed.value), "utf8").equals(bytes)).toBe(true);
    // Without the header and with CRLF line ends the same entries are read.
    const other = parseTableCsv(readFileSync(noHeader, "utf8"));
    expect(other.ok && Buffer.from(other.value).equals(Buffer.from(parsed.value))).toBe(true);
  });

  test("and numpy reads our export back to the same numbers", () => {
    const path = tmp.path("ours.csv");
    writeFileSync(path, tableToCsv(table("inferno").rgb));
    const out = run(PYTHON, ["-c", `import numpy as np; a = np.loadtxt(${JSON.stringify(path)}, delimiter=",", skiprows=1, dtype=int); print(a.shape, a[:, 1:].astype(np.uint8).tobytes().hex())`]);
    expect(out.trim()).toBe(`(256, 4) ${rgbToHexString(table("inferno").rgb)}`);
  });

  const bad = (edit: (lines: string[]) => string[]) => edit(tableToCsv(table("viridis").rgb).trimEnd().split("\n")).join("\n") + "\n";

  test.each([
    ["a value above 255 on line 12", (l: string[]) => ((l[11] = "10,68,256,84"), l), [{ line: 12, text: 'g "256" is not a whole number from 0 to 255' }]],
    ["a decimal and a negative value", (l: string[]) => ((l[3] = "2,1.5,0,0"), (l[4] = "3,-1,0,0"), l), [{ line: 4, text: 'r "1.5"' }, { line: 5, text: 'r "-1"' }]],
    ["rows out of order", (l: string[]) => ((l[6] = "6,0,0,0"), l), [{ line: 7, text: "index is 6, expected 5" }]],
    ["a missing column", (l: string[]) => ((l[20] = "19,1,2"), l), [{ line: 21, text: "Expected 4 values (index,r,g,b), found 3" }]],
    ["a blank line in the middle", (l: string[]) => ((l[30] = ""), l), [{ line: 31, text: "Empty line" }]],
    ["255 rows", (l: string[]) => l.slice(0, 256), [{ line: 257, text: "ends after 255 rows" }]],
    ["257 rows", (l: string[]) => [...l, "256,0,0,0"], [{ line: 258, text: "more than 256 rows" }]],
    ["a wrong header", (l: string[]) => ((l[0] = "i,red,green,blue"), l), [{ line: 1, text: 'The header must be "index,r,g,b"' }]],
  ])("rejects %s with line-numbered errors and returns no table", (_name, edit, expected) => {
    const result = parseTableCsv(bad(edit));
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.errors.length).toBe(expected.length);
    expected.forEach((e, k) => {
      expect(result.errors[k].line).toBe(e.line);
      expect(result.errors[k].message).toContain(e.text);
    });
    expect("value" in result).toBe(false);
  });

  test("reports at most 20 problems and says how many more there are", () => {
    const result = parseTableCsv(bad((l) => l.map((s, k) => (k === 0 ? s : s.replace(/,\d+$/, ",x")))));
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.errors.length).toBe(20);
    expect(result.errors[19].message).toContain("and 237 more problems");
  });

  test("accepts a byte-order mark, spaces around values and a missing final line end", () => {
    const csv = "\uFEFF" + tableToCsv(greyTable().rgb).trimEnd().replace(/,/g, " , ");
    const result = parseTableCsv(csv);
    expect(result.ok && Buffer.from(result.value).equals(Buffer.from(greyTable().rgb))).toBe(true);
  });
});

describe("JSON", () => {
  const file = () => ({ name: "Deep sea", space: "oklab" as const, stops: stops("#102040", "#40c0a0", "#f0f0c0"), rgb: buildTableFromStops(stops("#102040", "#40c0a0", "#f0f0c0"), "oklab").rgb });

  test("round-trips name, space, stops and the exact entries (format version 1)", () => {
    const text = tableToJson(file());
    const doc = JSON.parse(text);
    expect(doc).toMatchObject({ format: "fluxframe-colour-table", version: 1, name: "Deep sea", space: "oklab" });
    expect(doc.entries.length).toBe(256);
    const back = parseTableJson(text);
    expect(back.ok).toBe(true);
    if (!back.ok) return;
    expect(back.value.name).toBe("Deep sea");
    expect(back.value.stops).toEqual(file().stops);
    expect(Buffer.from(back.value.rgb).equals(Buffer.from(file().rgb))).toBe(true);
    expect(tableToJson(back.value)).toBe(text);
  });

  test("keeps an imported table without stops exactly (space and stops null)", () => {
    const text = tableToJson({ name: "Imported", space: null, stops: null, rgb: table("magma").rgb });
    const back = parseTableJson(text);
    expect(back.ok && rgbToHexString(back.value.rgb) === rgbToHexString(table("magma").rgb)).toBe(true);
  });

  test("names the line of a bad entry, a bad stop and an unknown version", () => {
    const doc = JSON.parse(tableToJson(file()));
    doc.entries[17] = "#12345";
    doc.stops[1].position = 1.5;
    doc.version = 2;
    const text = JSON.stringify(doc, null, 2);
    const lines = jsonValueLines(text);
    const result = parseTableJson(text);
    expect(result.ok).toBe(false);
    if (result.ok) return;
    const lineOfText = (needle: string) => text.split("\n").findIndex((l) => l.includes(needle)) + 1;
    expect(result.errors).toEqual(
      expect.arrayContaining([
        { line: lineOfText('"version": 2'), message: expect.stringContaining("Only version 1") },
        { line: lineOfText('"position": 1.5'), message: expect.stringContaining("stops.1.position") },
        { line: lineOfText('"#12345"'), message: expect.stringContaining("entries.17") },
      ]),
    );
    expect(lines.get("entries.17")).toBe(lineOfText('"#12345"'));
  });

  test("gives the line of a syntax error", () => {
    const text = tableToJson(file()).replace('"space": "oklab",', '"space": "oklab"');
    const result = parseTableJson(text);
    expect(result.ok).toBe(false);
    if (result.ok) return;
    const expectedLine = text.split("\n").findIndex((l) => l.includes('"stops"')) + 1;
    expect(result.errors[0].message).toMatch(/^Not valid JSON/);
    // The parser stops at the token after the missing comma: the "stops" line.
    expect(result.errors[0].line).toBe(expectedLine);
  });

  test("refuses stops that do not rebuild the entries, naming the first entry that differs", () => {
    const doc = JSON.parse(tableToJson(file()));
    doc.entries[200] = "#ff00ff";
    const text = JSON.stringify(doc, null, 2);
    const result = parseTableJson(text);
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.errors[0].message).toContain("entries.200");
    expect(result.errors[0].line).toBe(text.split("\n").findIndex((l) => l.includes('"#ff00ff"')) + 1);
  });

  test("hex string form of the entries round-trips", () => {
    const hex = rgbToHexString(table("cividis").rgb);
    expect(hex.length).toBe(1536);
    expect(Buffer.from(hexStringToRgb(hex)).equals(Buffer.from(table("cividis").rgb))).toBe(true);
  });
});
