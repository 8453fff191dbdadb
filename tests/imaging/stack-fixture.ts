// The seeded 12-bit stack written by tests/fixtures/make_tiffs.py, with numpy's reference numbers.
import { readFileSync } from "node:fs";
import { makeTiffs, readU16le, tempDir } from "@/tests/helpers/tiff-tools";

export interface NumpyStats {
  min: number;
  max: number;
  mean: number;
  /** numpy.std(ddof=0): population SD. */
  sd: number;
  count: number;
  countAtZero: number;
  countAt4095: number;
  /** numpy.percentile (default method "linear", Hyndman & Fan type 7) at PERCENTS. */
  percentiles: number[];
}

export const PERCENTS = [0, 0.01, 0.1, 1, 25, 50, 75, 99, 99.9, 99.99, 100];

export interface StackFixture {
  width: number;
  height: number;
  planes: Uint16Array[];
  leftJustified: Uint16Array;
  ref: { shape: number[]; planes: NumpyStats[]; all: NumpyStats; leftJustified: NumpyStats; channel0: NumpyStats };
  omePath: string;
  remove(): void;
}

export function loadStackFixture(): StackFixture {
  const tmp = tempDir("stack");
  makeTiffs("stack", tmp.dir);
  const ref = JSON.parse(readFileSync(tmp.path("stack.json"), "utf8")) as StackFixture["ref"];
  const [, , , height, width] = ref.shape;
  const all = readU16le(tmp.path("stack.planes.u16le"));
  const n = width * height;
  const planes = Array.from({ length: all.length / n }, (_, i) => all.subarray(i * n, (i + 1) * n));
  return { width, height, planes, leftJustified: readU16le(tmp.path("stack.leftjustified.u16le")), ref, omePath: tmp.path("stack.ome.tif"), remove: tmp.remove };
}
