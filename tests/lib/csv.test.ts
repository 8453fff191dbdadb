// The CSV writer against RFC 4180 (Shafranovich 2005) and against Python's csv module reading it back.
import { spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { csvField, toCsv } from "@/lib/csv";
import { PYTHON } from "@/tests/helpers/tiff-tools";

describe("CSV writer", () => {
  it("quotes only fields with a comma, quote or line break, and doubles quotes (RFC 4180 §2.6–2.7)", () => {
    expect(csvField("plain")).toBe("plain");
    expect(csvField("a,b")).toBe('"a,b"');
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField("two\nlines")).toBe('"two\nlines"');
    expect(csvField(1.5)).toBe("1.5");
    expect(csvField(null)).toBe("");
    expect(csvField(NaN)).toBe("");
  });

  it("writes rows that Python's csv module reads back unchanged", () => {
    const rows = [
      { region: 'Cell "A", left', value: 12.25, note: "line1\r\nline2" },
      { region: "é ñ µm²", value: -3, note: null },
    ];
    const text = toCsv(["region", "value", "note"], rows);
    expect(text.endsWith("\r\n")).toBe(true);
    const r = spawnSync(PYTHON, ["-c", "import csv,sys,json,io; print(json.dumps(list(csv.reader(io.StringIO(sys.stdin.read(), newline='')))))"], { input: text, encoding: "utf8" });
    expect(r.status, r.stderr).toBe(0);
    expect(JSON.parse(r.stdout)).toEqual([
      ["region", "value", "note"],
      ['Cell "A", left', "12.25", "line1\r\nline2"],
      ["é ñ µm²", "-3", ""],
    ]);
  });
});

describe("tidy region CSV", () => {
  it("writes one row per region, channel and plane with time in seconds and the unit", async () => {
    const { traceCsv } = await import("@/lib/regions-csv");
    const text = traceCsv("Stack, day 2", "Cell 1", (c) => ["nuclei", "membrane"][c], 1.5, {
      areaPx: 9,
      unit: "DN",
      points: [
        { z: 0, t: 0, channels: [{ c: 0, mean: 10, sum: 90, background: null, countAtCeiling: 0 }, { c: 1, mean: 4.5, sum: 40.5, background: null, countAtCeiling: 2 }] },
        { z: 0, t: 1, channels: [{ c: 0, mean: 11, sum: 99, background: null, countAtCeiling: 0 }, { c: 1, mean: 5, sum: 45, background: null, countAtCeiling: 0 }] },
      ],
    });
    const lines = text.trimEnd().split("\r\n");
    expect(lines[0]).toBe("dataset,region,channel,z,t,time_s,area_px,mean,sum,background_mean,count_at_ceiling,unit");
    expect(lines).toHaveLength(5);
    expect(lines[4]).toBe('"Stack, day 2",Cell 1,membrane,0,1,1.5,9,5,45,,0,DN');
  });
});
