// The bench worker draws with a lab's own colour tables once they are registered under
// "custom-<id>"; before that (or for an unknown id) a channel falls back to its colour ramp.
import { MessageChannel } from "node:worker_threads";
import { expose } from "comlink";
import { afterEach, describe, expect, test } from "vitest";
import { BenchWorkerClient, type BenchEndpoint } from "@/lib/client/use-bench-worker";
import { buildTableFromStops } from "@/lib/imaging/table-editor";
import { cancellable, createBenchApi, lookupTable, registerCustomTables, renderLayers } from "@/workers/bench-api";

// Pixel values 0, 1, 2, 3 with black 0 and white 3 map to levels 0, 85, 170, 255 (lut.ts, linear).
const pixels = Uint16Array.from([0, 1, 2, 3]);
const layer = (tableId: string) => ({ pixels, black: 0, white: 3, colour: [0, 255, 0] as const, tableId });
const rgbOf = (rgba: Uint8ClampedArray) => Array.from({ length: rgba.length / 4 }, (_, i) => [rgba[4 * i], rgba[4 * i + 1], rgba[4 * i + 2]]);

describe("custom colour tables in the bench worker", () => {
  test("renders a registered table's own entries, and the green ramp before it is registered", () => {
    const table = buildTableFromStops(
      [
        { position: 0, colour: "#200040" },
        { position: 1, colour: "#ffe080" },
      ],
      "oklab",
    ).rgb;
    const before = rgbOf(renderLayers([layer("custom-901")], 4, "add", { ceiling: 4095 }));
    expect(before.map(([r, , b]) => [r, b])).toEqual([[0, 0], [0, 0], [0, 0], [0, 0]]);
    expect(registerCustomTables([{ id: "custom-901", name: "Dusk", rgb: table }])).toBeGreaterThanOrEqual(1);
    const after = rgbOf(renderLayers([layer("custom-901")], 4, "add", { ceiling: 4095 }));
    expect(after).toEqual([0, 85, 170, 255].map((i) => [table[3 * i], table[3 * i + 1], table[3 * i + 2]]));
    // A copy is kept: changing the caller's array later does not change the registered table.
    table.fill(0);
    expect(lookupTable("custom-901")!.rgb[3 * 255]).toBe(0xff);
  });

  test("replaces a table registered again under the same id", () => {
    registerCustomTables([{ id: "custom-902", name: "A", rgb: new Uint8Array(768).fill(10) }]);
    registerCustomTables([{ id: "custom-902", name: "B", rgb: new Uint8Array(768).fill(20) }]);
    expect(lookupTable("custom-902")).toMatchObject({ name: "B" });
    expect(lookupTable("custom-902")!.rgb[0]).toBe(20);
  });

  test("refuses ids that could shadow a built-in table and tables of the wrong size", () => {
    expect(() => registerCustomTables([{ id: "viridis", name: "Fake", rgb: new Uint8Array(768) }])).toThrow(RangeError);
    expect(() => registerCustomTables([{ id: "custom-x", name: "Fake", rgb: new Uint8Array(768) }])).toThrow(RangeError);
    expect(() => registerCustomTables([{ id: "custom-903", name: "Short", rgb: new Uint8Array(767) }])).toThrow(RangeError);
    expect(lookupTable("viridis")!.name).toMatch(/^Viridis/);
    expect(lookupTable("custom-903")).toBeUndefined();
  });
});

describe("registering through the worker client", () => {
  let port: MessageChannel | null = null;
  afterEach(() => {
    port?.port1.close();
    port?.port2.close();
  });

  test("BenchWorkerClient.registerTables reaches the worker side over a message port", async () => {
    port = new MessageChannel();
    expose(cancellable(createBenchApi()), port.port1 as never);
    const client = new BenchWorkerClient(() => port!.port2 as unknown as BenchEndpoint);
    const known = await client.registerTables([{ id: "custom-904", name: "Over the port", rgb: new Uint8Array(768).fill(7) }]);
    expect(known).toBeGreaterThanOrEqual(1);
    expect(lookupTable("custom-904")).toMatchObject({ name: "Over the port" });
  });
});
