// Drawing in the worker (workers/bench-surface.ts) and the client's canvas hand-off
// (BenchWorkerClient.surfaceFor), in Node: a fake OffscreenCanvas keeps the bytes put into it, and
// an in-process comlink endpoint passes objects as they are (a real worker would transfer them).
import { expose, type Endpoint } from "comlink";
import { afterEach, describe, expect, test } from "vitest";
import { BenchWorkerClient, type BenchEndpoint } from "@/lib/client/use-bench-worker";
import { bufferSource } from "@/lib/tiff/byte-source";
import { readTiffStructure } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";
import { cancellable, createBenchApi, type BenchOpenArgs, type BenchView } from "@/workers/bench-api";
import { drawingRenders, type MakeImageData, type SurfaceCanvas } from "@/workers/bench-surface";

const W = 6;
const H = 4;

/** A canvas that stores what putImageData writes, the way a 2D canvas does for opaque pixels. */
function fakeCanvas(options: { noContext?: boolean } = {}) {
  const canvas = {
    width: 300,
    height: 150,
    bytes: new Uint8ClampedArray(300 * 150 * 4),
    puts: 0,
    getContext(kind: "2d") {
      if (options.noContext || kind !== "2d") return null;
      return {
        putImageData(image: ImageData, dx: number, dy: number) {
          canvas.puts++;
          if (canvas.bytes.length !== canvas.width * canvas.height * 4) canvas.bytes = new Uint8ClampedArray(canvas.width * canvas.height * 4);
          for (let y = 0; y < image.height; y++) canvas.bytes.set(image.data.subarray(y * image.width * 4, (y + 1) * image.width * 4), ((y + dy) * canvas.width + dx) * 4);
        },
        getImageData(sx: number, sy: number, sw: number, sh: number) {
          const data = new Uint8ClampedArray(sw * sh * 4);
          for (let y = 0; y < sh; y++) data.set(canvas.bytes.subarray(((sy + y) * canvas.width + sx) * 4, ((sy + y) * canvas.width + sx + sw) * 4), y * sw * 4);
          return { data, width: sw, height: sh } as unknown as ImageData;
        },
      };
    },
  };
  return canvas;
}

const imageData: MakeImageData = (data, width, height) => ({ data, width, height, colorSpace: "srgb" }) as unknown as ImageData;

async function oneChannelStack() {
  const planes = [0, 1].map((t) => Uint16Array.from({ length: W * H }, (_, i) => (i * 150 + t * 7) % 4096));
  const bytes = await writeTiff(planes, { width: W, height: H, bitsPerSample: 16 });
  const structure = await readTiffStructure(bufferSource(bytes));
  const args: BenchOpenArgs = {
    datasetId: 1,
    fileUrl: "/api/datasets/1/file",
    planes: planes.map((_, t) => ({ ifdIndex: t, ifdOffset: structure.ifds[t].offset, c: 0, z: 0, t })),
    width: W,
    height: H,
    ceiling: 4095,
  };
  return { bytes, args };
}

const view = (t: number): BenchView => ({ z: 0, t, composite: "add", channels: [{ c: 0, visible: true, black: 0, white: 4095, colour: [0, 255, 0] }] });

describe("drawingRenders", () => {
  async function api() {
    const { bytes, args } = await oneChannelStack();
    const inner = cancellable(createBenchApi({ openSource: async () => bufferSource(bytes) }));
    const wrapped = drawingRenders(inner, imageData);
    await wrapped.open(args);
    return wrapped;
  }

  test("without a canvas, returns the render for the main thread to draw", async () => {
    const r = await (await api()).renderView(view(0));
    expect(r.drawn).toBeUndefined();
    expect(r.rgba).toHaveLength(W * H * 4);
  });

  test("with a canvas, draws each render into it at plane size, the same bytes it returns", async () => {
    const a = await api();
    const canvas = fakeCanvas();
    a.attachCanvas(canvas as SurfaceCanvas);
    const r = await a.renderView(view(0), 1);
    expect(r.drawn).toBe(true);
    expect([canvas.width, canvas.height]).toEqual([W, H]);
    expect(Array.from(canvas.bytes)).toEqual(Array.from(r.rgba));
    // Read back: a rectangle of what is on the canvas.
    expect(Array.from(a.readCanvas(2, 1, 3, 2))).toEqual([...r.rgba.subarray((1 * W + 2) * 4, (1 * W + 5) * 4), ...r.rgba.subarray((2 * W + 2) * 4, (2 * W + 5) * 4)]);
    // Green ramp: pixel 1 holds 150 counts → round(150/4095·255) = 9 (lut.ts rounding), alpha 255.
    expect(Array.from(canvas.bytes.subarray(4, 8))).toEqual([0, 9, 0, 255]);
  });

  test("a render that finishes after a newer one was drawn is not drawn over it", async () => {
    const a = await api();
    const canvas = fakeCanvas();
    a.attachCanvas(canvas as SurfaceCanvas);
    const newer = await a.renderView(view(1), 8);
    const older = await a.renderView(view(0), 7);
    expect(newer.drawn).toBe(true);
    expect(older.drawn).toBeUndefined();
    expect(Array.from(canvas.bytes)).toEqual(Array.from(newer.rgba));
    expect(canvas.puts).toBe(1);
  });

  test("refuses a canvas without a 2D context, and reads back nothing without a canvas", async () => {
    const a = await api();
    expect(() => a.attachCanvas(fakeCanvas({ noContext: true }) as SurfaceCanvas)).toThrow(/no 2D context/);
    expect(() => a.readCanvas(0, 0, 1, 1)).toThrow(/No canvas is attached/);
    a.attachCanvas(fakeCanvas() as SurfaceCanvas);
    a.detachCanvas();
    expect((await a.renderView(view(0), 3)).drawn).toBeUndefined();
  });
});

/** Two comlink endpoints in one thread: messages pass by reference (nothing to clone or transfer). */
function localPair(): [Endpoint, BenchEndpoint] {
  type Listener = (event: MessageEvent) => void;
  const sides = [new Set<Listener>(), new Set<Listener>()];
  let open = true;
  const side = (own: Set<Listener>, other: Set<Listener>): Endpoint => ({
    postMessage: (message: unknown) => {
      if (open) for (const l of other) queueMicrotask(() => l({ data: message } as MessageEvent));
    },
    // Only messages: nothing here ever fires "error".
    addEventListener: (type: string, l: EventListenerOrEventListenerObject) => void (type === "message" && own.add(l as Listener)),
    removeEventListener: (_type: string, l: EventListenerOrEventListenerObject) => void own.delete(l as Listener),
  });
  const worker = side(sides[0], sides[1]);
  const page = Object.assign(side(sides[1], sides[0]), { terminate: () => (open = false) });
  return [worker, page];
}

/** A stand-in for the viewport's <canvas>: transferControlToOffscreen hands over the fake canvas once. */
function placeholder(offscreen: ReturnType<typeof fakeCanvas> | null) {
  let transferred = false;
  const element = offscreen
    ? {
        transferControlToOffscreen() {
          if (transferred) throw new DOMException("already transferred", "InvalidStateError");
          transferred = true;
          return offscreen;
        },
      }
    : {};
  return element as unknown as HTMLCanvasElement;
}

describe("BenchWorkerClient.surfaceFor", () => {
  const clients: BenchWorkerClient[] = [];
  afterEach(() => clients.splice(0).forEach((c) => c.terminate()));

  async function client() {
    const { bytes, args } = await oneChannelStack();
    const c = new BenchWorkerClient(() => {
      const [worker, page] = localPair();
      expose(drawingRenders(cancellable(createBenchApi({ openSource: async () => bufferSource(bytes) })), imageData), worker);
      return page;
    });
    clients.push(c);
    return { c, args };
  }

  test("transfers a canvas once; the worker draws into it; a stopped worker leaves it lost", async () => {
    const { c, args } = await client();
    const offscreen = fakeCanvas();
    const element = placeholder(offscreen);
    await c.open(args);
    expect(c.surfaceFor(element)).toBe("worker");
    expect(c.surfaceFor(element)).toBe("worker");
    const r = await c.render(view(1));
    expect(r.drawn).toBe(true);
    expect(Array.from(offscreen.bytes)).toEqual(Array.from(r.rgba));
    expect(Array.from(await c.readCanvas(0, 0, W, 1))).toEqual(Array.from(r.rgba.subarray(0, W * 4)));
    // As after React StrictMode's effect clean-up: the worker stops and a new one starts.
    c.terminate();
    await c.open(args);
    expect(c.surfaceFor(element)).toBe("lost");
    const fresh = fakeCanvas();
    expect(c.surfaceFor(placeholder(fresh))).toBe("worker");
    expect((await c.render(view(0))).drawn).toBe(true);
    expect(fresh.puts).toBe(1);
  });

  test("stays on the main thread where a canvas cannot be transferred, or the worker cannot draw into it", async () => {
    const { c, args } = await client();
    await c.open(args);
    expect(c.surfaceFor(placeholder(null))).toBe("main");
    expect((await c.render(view(0))).drawn).toBeUndefined();
    const refusing = placeholder(fakeCanvas({ noContext: true }));
    expect(c.surfaceFor(refusing)).toBe("worker");
    expect((await c.render(view(0))).drawn).toBeUndefined();
    // The refusal has arrived: that canvas is lost, and the next one is drawn by the main thread.
    expect(c.surfaceFor(refusing)).toBe("lost");
    expect(c.surfaceFor(placeholder(fakeCanvas()))).toBe("main");
  });
});
