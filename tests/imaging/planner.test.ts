import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  compressionRatios,
  fieldOfViewChange,
  fieldOfViewUm,
  formatBinary,
  formatDecimal,
  formatExactBytes,
  planStorage,
  timePointsFor,
  type PlanInput,
} from "@/lib/imaging/planner";
import { planInputOf, plannerDefaults, plannerFieldsFrom, plannerQuery } from "@/lib/schemas/planner";

const base: PlanInput = { width: 2000, height: 2000, bytesPerPixel: 2, channels: 1, zSlices: 1, positions: 1, intervalS: null, time: { mode: "count", timePoints: 1 } };

describe("planStorage", () => {
  it("a 2000 × 2000 plane at 2 bytes per pixel is 8 MB = 7.63 MiB (common practice, no published source)", () => {
    const plan = planStorage(base);
    expect(plan.bytesPerPlane).toBe(8_000_000);
    expect(formatDecimal(plan.bytesPerPlane)).toBe("8.00 MB");
    expect(formatBinary(plan.bytesPerPlane)).toBe("7.63 MiB"); // 8e6 / 1024² = 7.629…
    expect(formatExactBytes(plan.bytesPerPlane)).toBe("8,000,000 B");
  });

  it("2 channels × 80 slices of that plane are about 1.28 GB per time point (common practice, no published source)", () => {
    const plan = planStorage({ ...base, channels: 2, zSlices: 80 });
    expect(plan.bytesPerTimePoint).toBe(1_280_000_000);
    expect(formatDecimal(plan.bytesPerTimePoint)).toBe("1.28 GB");
    expect(formatBinary(plan.bytesPerTimePoint)).toBe("1.19 GiB");
  });

  it("counts time points from 0 to the end: 1 h every 10 min is 7, and gives rates per hour and day", () => {
    expect(timePointsFor(3600, 600)).toBe(7);
    expect(timePointsFor(3599, 600)).toBe(6);
    expect(timePointsFor(3600, 0.1)).toBe(36_001); // 3600 / 0.1 is 35999.99… in binary floating point
    const plan = planStorage({ ...base, channels: 2, zSlices: 80, positions: 3, intervalS: 600, time: { mode: "duration", durationS: 3600 } });
    expect(plan.bytesPerStack).toBe(1_280_000_000);
    expect(plan.bytesPerTimePoint).toBe(3_840_000_000);
    expect(plan.timePoints).toBe(7);
    expect(plan.spanS).toBe(3600);
    expect(plan.totalBytes).toBe(7 * 3_840_000_000);
    expect(plan.totalPlanes).toBe(2 * 80 * 3 * 7);
    // One time point every 10 min: 6 per hour, 144 per day.
    expect(plan.bytesPerHour).toBe(6 * 3_840_000_000);
    expect(plan.bytesPerDay).toBe(144 * 3_840_000_000);
    // 1.28 GB every 10 min is exactly 7.68 GB per hour, without float dust in the byte count.
    const single = planStorage({ ...base, channels: 2, zSlices: 80, intervalS: 600, time: { mode: "duration", durationS: 3600 } });
    expect(single.bytesPerHour).toBe(7_680_000_000);
    expect(formatExactBytes(single.bytesPerHour!)).toBe("7,680,000,000 B");
  });

  it("without an interval there is no rate, and a duration cannot be turned into time points", () => {
    const plan = planStorage({ ...base, time: { mode: "count", timePoints: 10 } });
    expect(plan).toMatchObject({ timePoints: 10, totalBytes: 80_000_000, bytesPerHour: null, bytesPerDay: null, spanS: null });
    expect(() => planStorage({ ...base, time: { mode: "duration", durationS: 60 } })).toThrow(/needs an interval/);
  });

  it("total = plane × channels × z × positions × time points for any input", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 4096 }), fc.integer({ min: 1, max: 4096 }), fc.constantFrom(1, 2, 4),
        fc.integer({ min: 1, max: 8 }), fc.integer({ min: 1, max: 200 }), fc.integer({ min: 1, max: 20 }), fc.integer({ min: 1, max: 1000 }),
        (width, height, bytesPerPixel, channels, zSlices, positions, timePoints) => {
          const plan = planStorage({ width, height, bytesPerPixel, channels, zSlices, positions, intervalS: 30, time: { mode: "count", timePoints } });
          expect(plan.totalBytes).toBe(width * height * bytesPerPixel * channels * zSlices * positions * timePoints);
          expect(plan.bytesPerHour! * 24).toBeCloseTo(plan.bytesPerDay!, 0);
        },
      ),
    );
  });
});

describe("formatting sizes", () => {
  it("uses 1000 for decimal and 1024 for binary units", () => {
    expect(formatDecimal(999)).toBe("999 B");
    expect(formatDecimal(1000)).toBe("1.00 kB");
    expect(formatBinary(1000)).toBe("1000 B");
    expect(formatBinary(1024)).toBe("1.00 KiB");
    expect(formatDecimal(1.5e12)).toBe("1.50 TB");
    expect(formatBinary(1.5 * 1024 ** 4)).toBe("1.50 TiB");
    expect(formatDecimal(123_456_789)).toBe("123 MB");
    expect(formatDecimal(12_345_678)).toBe("12.3 MB");
  });

  it("steps up a unit instead of writing 1000 MB", () => {
    expect(formatDecimal(999_960_000)).toBe("1.00 GB");
    expect(formatBinary(1024 ** 3 - 1)).toBe("1.00 GiB");
  });

  it("marks byte counts that are not whole or beyond 2^53 as approximate", () => {
    expect(formatExactBytes(2 ** 60)).toMatch(/^≈ 1\.153e\+18 B$/);
    expect(formatExactBytes(1e9 / 7)).toBe("≈ 142,857,143 B");
  });
});

describe("field of view", () => {
  it("40× → 5× gives 8× the width and 64× the area (area ∝ 1/M², geometry; common practice)", () => {
    expect(fieldOfViewChange(40, 5)).toEqual({ linear: 8, area: 64 });
    expect(fieldOfViewChange(10, 40).area).toBeCloseTo(1 / 16, 12);
  });

  it("gives the field at the sample from the camera size, pixel pitch and magnification", () => {
    // 2048 × 2048 pixels of 6.5 µm behind 40×: 332.8 µm square, 0.1108 mm².
    const fov = fieldOfViewUm(2048, 2048, 6.5, 40);
    expect(fov.widthUm).toBeCloseTo(332.8, 9);
    expect(fov.areaMm2).toBeCloseTo(0.11075584, 9);
  });
});

describe("compressionRatios", () => {
  it("divides raw pixel bytes by stored bytes per codec, most-used first, and over all", () => {
    const { codecs, overall } = compressionRatios([
      { codec: "none", datasets: 1, rawBytes: 1000, storedBytes: 1100 },
      { codec: "Deflate", datasets: 3, rawBytes: 9000, storedBytes: 4500 },
      { codec: "LZW", datasets: 0, rawBytes: 0, storedBytes: 0 },
    ]);
    expect(codecs.map((c) => [c.codec, c.ratio])).toEqual([["Deflate", 2], ["none", 1000 / 1100]]);
    expect(overall).toEqual({ codec: "all", datasets: 4, rawBytes: 10_000, storedBytes: 5600, ratio: 10_000 / 5600 });
    expect(compressionRatios([])).toEqual({ codecs: [], overall: null });
  });
});

describe("the planner's query schema", () => {
  const parse = (over: Record<string, string>) => plannerQuery.safeParse({ ...plannerDefaults, ...over });

  it("accepts the defaults and turns them into a plan of 2048² × 2 B × 2 × 20, every 5 min for 12 h (145 time points)", () => {
    const q = plannerQuery.parse(plannerDefaults);
    const plan = planStorage(planInputOf(q));
    expect(plan.bytesPerStack).toBe(2048 * 2048 * 2 * 2 * 20);
    expect(plan.timePoints).toBe(145);
  });

  it("gives a clear message per field", () => {
    const messages = (over: Record<string, string>) => {
      const r = parse(over);
      return r.success ? {} : Object.fromEntries(r.error.issues.map((i) => [i.path.join("."), i.message]));
    };
    expect(messages({ w: "" })).toEqual({ w: "Enter the width." });
    expect(messages({ w: "20.5" })).toEqual({ w: "The width must be a whole number." });
    expect(messages({ h: "abc" })).toEqual({ h: "The height must be a number." });
    expect(messages({ c: "0" })).toEqual({ c: "The number of channels must be 1–64." });
    expect(messages({ bpp: "3" })).toEqual({ bpp: "Choose the bytes per pixel." });
    expect(messages({ iv: "" })).toEqual({ iv: "Enter the interval between time points." });
    expect(messages({ mode: "count", tp: "" })).toEqual({ tp: "Enter the number of time points." });
    expect(messages({ iv: "0.001", ivu: "s", dur: "365", duru: "d" })).toEqual({ dur: "That is more than 10 000 000 time points; check the interval and duration." });
  });

  it("accepts a decimal comma and lets a count of time points go without an interval", () => {
    const q = plannerQuery.parse({ ...plannerDefaults, pitch: "6,5", mode: "count", iv: "", tp: "10" });
    expect(q.pitch).toBe(6.5);
    expect(planStorage(planInputOf(q))).toMatchObject({ timePoints: 10, bytesPerHour: null });
  });

  it("reads fields from a query string, defaults for the rest", () => {
    const fields = plannerFieldsFrom(new URLSearchParams("w=2000&h=2000&c=2&z=80&unknown=1"));
    expect(fields).toEqual({ ...plannerDefaults, w: "2000", h: "2000", c: "2", z: "80" });
  });
});
