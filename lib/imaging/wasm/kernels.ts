// The WebAssembly pixel kernels (scripts/build-wasm.ts): the 1–4 channel composites, about twice
// as fast as the best plain-JavaScript loops (tests/bench/pixels.ts), because WebAssembly reads its
// memory without the checks V8 puts on typed arrays and combines four pixels per vector operation.
// Tables, then pixels a chunk at a time, are copied into the module's own memory and results copied
// back, so callers keep ordinary typed arrays and nothing they pass is ever written. Where
// WebAssembly (with SIMD) is missing, the CSP forbids compiling it, or the host is big-endian (the
// kernels read pixels and write colours little-endian), wasmComposite returns false and the
// callers run their JavaScript loops, which give the same words.
import { LITTLE_ENDIAN } from "../lut";
import { KERNELS_WASM_BASE64 } from "./kernels-binary";

interface KernelExports {
  memory: WebAssembly.Memory;
  [combine: `combine_${string}`]: (...args: number[]) => void;
}

/** The kernels' fixed memory layout (scripts/build-wasm.ts), with views made once. */
interface Kernels {
  exports: KernelExports;
  tables: Uint32Array[];
  chunks: Uint16Array[];
  output: Uint32Array;
}

const TABLES = 0;
const TABLE_ENTRIES = 65536;
const CHUNKS = 4 * 4 * TABLE_ENTRIES;
/**
 * Pixels per call: planes are copied in and results out a chunk at a time, so the copies and the
 * kernel's reads stay in the core's cache and each plane crosses main memory once, not three times.
 */
const CHUNK = 32768;
const OUTPUT = CHUNKS + 4 * 2 * CHUNK;

let kernels: Kernels | null | undefined;
let enabled = true;

function load(): Kernels | null {
  if (!LITTLE_ENDIAN || typeof WebAssembly !== "object") return null;
  try {
    const bytes = Uint8Array.from(atob(KERNELS_WASM_BASE64), (ch) => ch.charCodeAt(0));
    // Synchronous compiling is allowed for modules under 4 KiB even on a browser's main thread.
    const exports = new WebAssembly.Instance(new WebAssembly.Module(bytes), {}).exports as unknown as KernelExports;
    const memory = exports.memory.buffer;
    return {
      exports,
      tables: [0, 1, 2, 3].map((c) => new Uint32Array(memory, TABLES + 4 * TABLE_ENTRIES * c, TABLE_ENTRIES)),
      chunks: [0, 1, 2, 3].map((c) => new Uint16Array(memory, CHUNKS + 2 * CHUNK * c, CHUNK)),
      output: new Uint32Array(memory, OUTPUT, CHUNK),
    };
  } catch {
    return null;
  }
}

/** The kernels, or null where they cannot run (or are switched off). */
function ready(): Kernels | null {
  if (!enabled) return null;
  if (kernels === undefined) kernels = load();
  return kernels;
}

/** Whether calls run in WebAssembly here; false sends every caller to its JavaScript loop. */
export function wasmKernelsAvailable(): boolean {
  return ready() !== null;
}

/** Switches the WebAssembly kernels off or on (tests and `npm run bench` compare both paths). */
export function setWasmKernels(on: boolean): void {
  enabled = on;
}

export interface WasmChannel {
  pixels: Uint16Array | Uint8Array;
  /** Raw value → packed RGBA; at least 65,536 entries for 16-bit pixels, 256 for 8-bit ones. */
  rgbaLut: Uint32Array;
}

/**
 * out[i] = the per-byte saturating sum ("add") or per-byte maximum ("max") of every channel's
 * rgbaLut[pixels[i]], for 1–4 channels of equal length (checked by the caller). Returns false,
 * having written nothing, when the kernels cannot run or there are more than four channels.
 */
export function wasmComposite(op: "add" | "max", channels: readonly WasmChannel[], out: Uint32Array): boolean {
  const k = ready();
  const count = channels.length;
  if (!k || count < 1 || count > 4) return false;
  // One channel has nothing to combine: "max" and "add" both give its colours.
  const combine = k.exports[`combine_${count === 1 ? "add" : op}_${count}`];
  const args: number[] = [];
  channels.forEach((c, i) => {
    k.tables[i].set(c.rgbaLut.length > TABLE_ENTRIES ? c.rgbaLut.subarray(0, TABLE_ENTRIES) : c.rgbaLut);
    args.push(k.chunks[i].byteOffset, k.tables[i].byteOffset);
  });
  args.push(k.output.byteOffset, 0);
  const n = channels[0].pixels.length;
  for (let i = 0; i < n; i += CHUNK) {
    const len = Math.min(CHUNK, n - i);
    for (let c = 0; c < count; c++) k.chunks[c].set(channels[c].pixels.subarray(i, i + len));
    // Whole steps of four pixels: up to three pixels past the end read stale chunk memory, valid
    // table indices all the same, and their results are not copied out.
    args[args.length - 1] = (len + 3) & ~3;
    combine(...args);
    out.set(len === CHUNK ? k.output : k.output.subarray(0, len), i);
  }
  return true;
}
