// Runs the independent tools the TIFF tests compare against. A missing tool fails the test (it must
// not be skipped): install Debian libtiff-tools (tiffcp), python3-numpy and python3-tifffile.
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";

export const PYTHON = "/usr/bin/python3";
export const TIFFCP = "/usr/bin/tiffcp";
const FIXTURE_SCRIPT = resolve(import.meta.dirname, "..", "fixtures", "make_tiffs.py");

/** Runs a program and returns its stdout; throws with its stderr when it fails or is missing. */
export function run(cmd: string, args: string[]): string {
  const r = spawnSync(cmd, args, { encoding: "utf8", maxBuffer: 64 * 1024 * 1024 });
  if (r.error) throw new Error(`${cmd} could not be run (${r.error.message}); the TIFF tests need it installed`);
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(" ")} exited with ${r.status}:\n${r.stderr}`);
  return r.stdout;
}

/** libtiff's tiffcp: re-encodes `input` into `output` with the given options (e.g. ["-c", "lzw:2"]). */
export function tiffcp(input: string, output: string, options: string[]): string {
  run(TIFFCP, [...options, input, output]);
  return output;
}

/** Runs tests/fixtures/make_tiffs.py (numpy + tifffile) with a sub-command. */
export function makeTiffs(...args: string[]): string {
  return run(PYTHON, [FIXTURE_SCRIPT, ...args]);
}

/** What tifffile reads from a TIFF file: IFD offsets, strip/tile offsets, codec, description. */
export interface TifffileInfo {
  littleEndian: boolean;
  bigTiff: boolean;
  pages: {
    offset: number;
    width: number;
    height: number;
    bitsPerSample: number;
    compression: number;
    predictor: number;
    tiled: boolean;
    tileWidth: number;
    tileLength: number;
    rowsPerStrip: number;
    dataOffsets: number[];
    byteCounts: number[];
    description: string;
  }[];
}

/** One Python start for many files (each start costs ~0.2 s). */
export function tifffileInfo(...paths: string[]): TifffileInfo[] {
  return JSON.parse(makeTiffs("info", ...paths)) as TifffileInfo[];
}

export function tempDir(prefix: string): { dir: string; path(name: string): string; remove(): void } {
  const dir = mkdtempSync(join(tmpdir(), `fluxframe-${prefix}-`));
  return { dir, path: (name) => join(dir, name), remove: () => rmSync(dir, { recursive: true, force: true }) };
}

/** Reads a little-endian raw dump written by numpy's tofile(). */
export function readU16le(path: string): Uint16Array {
  const b = readFileSync(path);
  const out = new Uint16Array(b.byteLength / 2);
  for (let i = 0; i < out.length; i++) out[i] = b.readUInt16LE(i * 2);
  return out;
}

export function readF32le(path: string): Float32Array {
  const b = readFileSync(path);
  const out = new Float32Array(b.byteLength / 4);
  for (let i = 0; i < out.length; i++) out[i] = b.readFloatLE(i * 4);
  return out;
}

/** Re-encodings of the same stack by libtiff's tiffcp: every lossless codec, predictor, tiles, BigTIFF, big-endian. */
export const TIFFCP_VARIANTS: { name: string; options: string[] }[] = [
  { name: "uncompressed", options: ["-c", "none"] },
  { name: "LZW", options: ["-c", "lzw"] },
  { name: "LZW + horizontal predictor", options: ["-c", "lzw:2"] },
  { name: "Deflate", options: ["-c", "zip"] },
  { name: "Deflate + horizontal predictor", options: ["-c", "zip:2"] },
  { name: "PackBits, 5-row strips", options: ["-r", "5", "-c", "packbits"] },
  { name: "32×32 tiles, LZW + predictor", options: ["-t", "-w", "32", "-l", "32", "-c", "lzw:2"] },
  { name: "16×16 tiles, uncompressed", options: ["-t", "-w", "16", "-l", "16", "-c", "none"] },
  { name: "BigTIFF, Deflate", options: ["-8", "-c", "zip"] },
  { name: "big-endian, LZW + predictor", options: ["-B", "-c", "lzw:2"] },
  { name: "big-endian BigTIFF, 16×16 tiles, Deflate + predictor", options: ["-B", "-8", "-t", "-w", "16", "-l", "16", "-c", "zip:2"] },
];

/** A ByteSource wrapper that records every read, to check what a function touched. */
export function countingSource<S extends { size: number; read(o: number, l: number, s?: AbortSignal): Promise<ArrayBuffer> }>(inner: S) {
  const reads: { offset: number; length: number }[] = [];
  return {
    reads,
    source: {
      size: inner.size,
      read(offset: number, length: number, signal?: AbortSignal) {
        reads.push({ offset, length });
        return inner.read(offset, length, signal);
      },
    },
  };
}
