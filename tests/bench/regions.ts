/**
 * Region trace benchmark (issue 6, "Speed"), called from tests/bench/run.ts: a region's trace over
 * 500 planes of 512 × 512 (decode + statistics in the bench's worker API, each plane read by its
 * stored IFD offset) against decoding the same 500 planes alone, in this run, from the same bytes.
 * The ratio is informational and never fails the run.
 */
import { createRandom } from "@/lib/imaging/random";
import { bufferSource } from "@/lib/tiff/byte-source";
import { decodePlane } from "@/lib/tiff/decode";
import { readTiffStructure } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";
import { createBenchApi } from "@/workers/bench-api";
import { ms as f, type Row } from "./row";

const SIDE = 512;
const PLANES = 500;
const now = () => performance.now();

export async function regionBenches(): Promise<Row[]> {
  // Eight distinct noisy 12-bit planes, repeated: the decoder cannot tell, and memory stays small.
  const random = createRandom(6);
  const distinct = Array.from({ length: 8 }, () => Uint16Array.from({ length: SIDE * SIDE }, () => 100 + Math.floor(random.uniform() * 3000)));
  const bytes = await writeTiff(Array.from({ length: PLANES }, (_, i) => distinct[i % distinct.length]), { width: SIDE, height: SIDE, bitsPerSample: 16 });
  const source = bufferSource(bytes);
  const structure = await readTiffStructure(source);
  const header = { littleEndian: structure.littleEndian, bigTiff: structure.bigTiff, firstIfdOffset: structure.firstIfdOffset };
  const offsets = structure.ifds.map((d) => d.offset);

  // Baseline: every plane decoded by its offset, nothing else.
  let sink = 0;
  let t0 = now();
  for (const offset of offsets) sink += (await decodePlane(source, offset, { header })).data[0];
  const decodeMs = now() - t0;

  // Measured: the worker API's trace over t of a 200 × 150 rectangle, with a background region,
  // through a fresh cache (each plane decoded once, histogrammed as the bench does, then measured).
  const api = createBenchApi({ openSource: async () => source });
  await api.open({
    datasetId: "bench-trace",
    fileUrl: "/bench",
    header,
    planes: offsets.map((ifdOffset, t) => ({ ifdIndex: t, ifdOffset, c: 0, z: 0, t })),
    width: SIDE,
    height: SIDE,
    ceiling: 4095,
  });
  t0 = now();
  const trace = await api.trace({
    shape: { kind: "rect", x: 100, y: 120, width: 200, height: 150 },
    background: { kind: "ellipse", cx: 450, cy: 450, rx: 30, ry: 30 },
    axis: "t",
    fixed: 0,
    length: PLANES,
    channels: [0],
  });
  const traceMs = now() - t0;
  await api.close();
  sink += trace.points.length;
  if (sink === 0.5) console.log(sink);

  const ratio = traceMs / decodeMs;
  return [
    {
      bench: `Region trace over ${PLANES} planes of ${SIDE}×${SIDE} (decode + stats)`,
      baseline: `decode alone ${f(decodeMs)}`,
      measured: `trace ${f(traceMs)}`,
      ratio,
      // Our choice: the statistics should cost less than the decoding they follow.
      target: "≤ 2× decoding",
      met: ratio <= 2,
    },
  ];
}
