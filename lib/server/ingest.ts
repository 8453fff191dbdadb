import "server-only";
import { PNG } from "pngjs";
import { ceilingFor, isLeftJustified } from "@/lib/imaging/ceiling";
import { histogram16, mergeHistograms, statsFromHistogram, type Histogram } from "@/lib/imaging/histogram";
import { compositeAdditive, downscaleRgba } from "@/lib/imaging/mapping";
import { defaultChannelColour, hexToRgb } from "@/lib/imaging/palettes";
import { summarise, summariseForCeilings, type PlaneSummary } from "@/lib/imaging/summary";
import { windowedSource, type ByteSource } from "@/lib/tiff/byte-source";
import type { DecodedPlane } from "@/lib/tiff/decode";
import { scanPlanes } from "@/lib/tiff/scan";
import { DIMENSION_ORDERS, OmeXmlError, parseOmeXml, planeIndex, type DimensionOrder, type OmeImage } from "@/lib/tiff/ome";
import { compressionName, readTiffStructure, TiffFormatError, type IfdInfo, type TiffHeader } from "@/lib/tiff/structure";
import type { ChannelInfo, Dataset } from "@/models";
import { statColumnsOf } from "@/models/plane";
import { blobByteSource } from "./blob-source";
import { db } from "./db";
import { inflateOffThread } from "./native-inflate";
import { blobStore } from "./storage";

/** A problem with the file itself: the dataset fails with this message, and retrying will not help. */
export class IngestError extends Error {
  override name = "IngestError";
}

export interface IngestOptions {
  signal?: AbortSignal;
  /** Called after every plane with (done, total). */
  onProgress?: (done: number, total: number) => Promise<void> | void;
}

interface Dimensions {
  sizeC: number;
  sizeZ: number;
  sizeT: number;
  order: DimensionOrder;
}

function dimensionsFor(dataset: Dataset, ome: OmeImage | null, planeCount: number): Dimensions {
  const dims = ome
    ? { sizeC: ome.sizeC, sizeZ: ome.sizeZ, sizeT: ome.sizeT, order: ome.dimensionOrder }
    : dataset.sizeC && dataset.sizeZ && dataset.sizeT
      ? { sizeC: dataset.sizeC, sizeZ: dataset.sizeZ, sizeT: dataset.sizeT, order: (dataset.dimensionOrder ?? "XYCZT") as DimensionOrder }
      : null;
  if (!dims) {
    throw new IngestError(
      `This file has no OME-XML and no dimensions were given. Enter its channels, z-slices and time points (C·Z·T must be ${planeCount}).`,
    );
  }
  if (!DIMENSION_ORDERS.includes(dims.order)) throw new IngestError(`Unknown dimension order ${dims.order}.`);
  const product = dims.sizeC * dims.sizeZ * dims.sizeT;
  if (product !== planeCount) {
    throw new IngestError(
      `C·Z·T = ${dims.sizeC}·${dims.sizeZ}·${dims.sizeT} = ${product}, but the file holds ${planeCount} planes. Correct the dimensions.`,
    );
  }
  return dims;
}

/** Refuses, with the reason, a stack the ingest cannot summarise. Pure: tested without a database. */
export function checkPlanes(planes: IfdInfo[], fileSize: number): void {
  if (planes.length === 0) throw new IngestError("The file holds no image planes.");
  const first = planes[0];
  for (const ifd of planes) {
    if (!ifd.supported) throw new IngestError(`Plane ${ifd.index + 1} cannot be read: ${ifd.unsupportedReason}`);
    if (ifd.width !== first.width || ifd.height !== first.height || ifd.bitsPerSample[0] !== first.bitsPerSample[0]) {
      throw new IngestError(`Plane ${ifd.index + 1} is ${ifd.width}×${ifd.height} at ${ifd.bitsPerSample[0]} bits; plane 1 is ${first.width}×${first.height} at ${first.bitsPerSample[0]} bits. A stack needs equal planes.`);
    }
    for (let i = 0; i < ifd.layout.offsets.length; i++) {
      if (ifd.layout.offsets[i] + ifd.layout.byteCounts[i] > fileSize) {
        throw new IngestError(`Plane ${ifd.index + 1} points past the end of the file (the file is truncated or damaged).`);
      }
    }
  }
  if (first.compression === 1) {
    const needed = first.width * first.height * (first.bitsPerSample[0] / 8) * planes.length;
    if (needed > fileSize) throw new IngestError(`${planes.length} uncompressed planes of ${first.width}×${first.height} need ${needed} bytes, but the file has ${fileSize}.`);
  }
  // Histograms and percentiles here are exact over integer codes; float values have no such bins.
  if (first.sampleFormat[0] === 3) throw new IngestError("32-bit float planes are read by the decoder but not yet summarised; convert to 16-bit integers.");
}

// Node's native zlib inflates Deflate blocks several times faster than a JavaScript inflate, and
// its asynchronous form runs on the thread pool: blocks inflate on both cores while this thread
// counts. Two planes decode ahead so blocks stay queued for the pool while a plane is counted.
const SCAN = { inflate: inflateOffThread, lookahead: 2 };

/**
 * Decodes the planes in file order as the ingest does. A damaged plane stops the scan with an
 * IngestError naming the plane (1-based), whichever thread its inflate ran on.
 */
export async function* ingestPlanes(
  source: ByteSource,
  header: TiffHeader,
  planes: readonly IfdInfo[],
  signal?: AbortSignal,
): AsyncGenerator<{ index: number; ifd: IfdInfo; plane: DecodedPlane }> {
  const scan = scanPlanes(source, header, planes, { ...SCAN, signal });
  for (let n = 1; ; n++) {
    signal?.throwIfAborted();
    let step;
    try {
      step = await scan.next();
    } catch (error) {
      if (error instanceof TiffFormatError) throw new IngestError(`Plane ${n}: ${error.message}`);
      throw error;
    }
    if (step.done) return;
    yield step.value;
  }
}

// Until the whole stack is read the ceiling may be unknown (no SignificantBits): keep what each
// candidate ceiling needs, and pick once the maximum is known.
const CANDIDATE_BITS = [8, 10, 12, 14, 16];

interface PendingPlane {
  ifd: IfdInfo;
  c: number;
  z: number;
  t: number;
  byCeiling: Map<number, PlaneSummary>;
}

async function renderThumbnail(
  decoded: { c: number; data: Uint8Array | Uint16Array | Float32Array }[],
  width: number,
  height: number,
  channels: ChannelInfo[],
  stats: Map<number, PlaneSummary>,
): Promise<Buffer> {
  const rgba = compositeAdditive(
    decoded.map(({ c, data }) => {
      const s = stats.get(c)!;
      // Default mapping: Fit from 0.1 % to 99.9 % of the channel's values (the bench's default Fit).
      return { pixels: data, mapping: { black: s.percentiles["0.1"], white: Math.max(s.percentiles["99.9"], s.percentiles["0.1"] + 1), colour: hexToRgb(channels[c].colour) } };
    }),
    width * height,
  );
  const small = downscaleRgba(rgba, width, height, 160);
  const png = new PNG({ width: small.width, height: small.height });
  png.data = Buffer.from(small.rgba.buffer, small.rgba.byteOffset, small.rgba.byteLength);
  return PNG.sync.write(png);
}

/**
 * Reads the stored original of a dataset once, plane by plane: structure, dimensions, exact per-plane
 * and per-channel statistics, a thumbnail. Writes everything in one transaction at the end, so a
 * failure leaves no half-written planes. The original is only read.
 */
export async function ingestDataset(datasetId: number, options: IngestOptions = {}): Promise<void> {
  const { Dataset, Plane, ChannelStat, sequelize } = db();
  const store = blobStore();
  const dataset = await Dataset.findByPk(datasetId);
  if (!dataset) throw new IngestError(`Dataset ${datasetId} no longer exists.`);

  // IFDs are small and scattered: read them through a window cache. Pixel data is read directly,
  // in the large merged ranges decodeIfd asks for.
  const raw = blobByteSource(store, dataset.blobKey, dataset.sizeBytes);
  const source = windowedSource(raw, { windowSize: 1 << 20, maxWindows: 64 });
  let structure;
  try {
    structure = await readTiffStructure(source, { signal: options.signal });
  } catch (error) {
    if (error instanceof TiffFormatError) throw new IngestError(error.message);
    throw error;
  }
  // Reduced-resolution copies (NewSubfileType bit 0) are previews, not planes.
  const planes = structure.ifds.filter((ifd) => (ifd.subfileType & 1) === 0);
  const lossy = planes.find((p) => p.lossy);
  if (lossy) {
    // Kept and listed, but flagged before anything else: its values are not the camera's counts.
    await dataset.update({ lossy: true, compression: compressionName(lossy.compression), planeCount: planes.length });
    if (!lossy.supported) {
      throw new IngestError(`Lossy ${compressionName(lossy.compression)} compression — not for quantification. The file is stored, but Fluxframe does not read lossy planes.`);
    }
  }
  checkPlanes(planes, structure.fileSize);
  const first = planes[0];

  let ome: OmeImage | null = null;
  const description = first.imageDescription ?? "";
  if (description.includes("<OME")) {
    try {
      ome = parseOmeXml(description).images[0] ?? null;
    } catch (error) {
      if (error instanceof OmeXmlError) throw new IngestError(`The OME-XML in this file is not valid: ${error.message}`);
      throw error;
    }
  }
  const dims = dimensionsFor(dataset, ome, planes.length);
  const bits = first.bitsPerSample[0];
  const significantBits = ome?.significantBits ?? dataset.significantBits ?? (bits === 8 ? 8 : null);
  const candidates = significantBits ? [2 ** significantBits - 1] : CANDIDATE_BITS.map((b) => 2 ** b - 1);

  const channelHists: Float64Array[] = Array.from({ length: dims.sizeC }, () => new Float64Array(bits === 8 ? 256 : 65536));
  const pending: PendingPlane[] = [];
  const thumbZ = Math.floor(dims.sizeZ / 2);
  const thumbPlanes: { c: number; data: Uint8Array | Uint16Array | Float32Array }[] = [];
  let stackMax = 0;

  for await (const { index: i, ifd, plane: decoded } of ingestPlanes(raw, structure, planes, options.signal)) {
    const { c, z, t } = planeIndex(dims.order, { sizeC: dims.sizeC, sizeZ: dims.sizeZ, sizeT: dims.sizeT }, i);
    const hist = histogram16(decoded.data as Uint16Array | Uint8Array, bits === 8 ? 256 : 65536);
    const channelHist = channelHists[c];
    for (let v = 0; v < hist.length; v++) if (hist[v]) channelHist[v] += hist[v];
    const byCeiling = summariseForCeilings(hist, candidates);
    stackMax = Math.max(stackMax, byCeiling.get(candidates[0])!.max);
    pending.push({ ifd, c, z, t, byCeiling });
    if (z === thumbZ && t === 0) thumbPlanes.push({ c, data: decoded.data });
    await options.onProgress?.(i + 1, planes.length);
  }

  const ceiling = ceilingFor({ significantBits, max: stackMax });
  const pick = (p: PendingPlane) => p.byCeiling.get(ceiling.ceiling) ?? summarise(new Uint32Array(1), ceiling.ceiling);
  const channels: ChannelInfo[] = Array.from({ length: dims.sizeC }, (_, c) => {
    const fromFile = ome?.channels[c];
    const previous = dataset.channels?.[c];
    return {
      name: fromFile?.name || previous?.name || `Channel ${c + 1}`,
      colour: fromFile?.colour ?? previous?.colour ?? defaultChannelColour(c, dims.sizeC),
      emissionNm: fromFile?.emissionWavelengthNm ?? previous?.emissionNm ?? null,
    };
  });
  const channelSummaries = new Map(channelHists.map((h, c) => [c, summarise(h as Histogram, ceiling.ceiling)]));
  const thumbnail = await renderThumbnail(thumbPlanes, first.width, first.height, channels, channelSummaries);
  const thumbnailKey = `derived/${dataset.id}/thumbnail-${Date.now()}.png`;
  await store.put(thumbnailKey, thumbnail, { contentType: "image/png" });


  await sequelize.transaction(async (transaction) => {
    await Plane.destroy({ where: { datasetId }, transaction });
    await ChannelStat.destroy({ where: { datasetId }, transaction });
    for (let i = 0; i < pending.length; i += 500) {
      await Plane.bulkCreate(
        pending.slice(i, i + 500).map((p) => ({ datasetId, ifdIndex: p.ifd.index, ifdOffset: p.ifd.offset, c: p.c, z: p.z, t: p.t, ...statColumnsOf(pick(p)) })),
        { transaction },
      );
    }
    await ChannelStat.bulkCreate([...channelSummaries].map(([c, s]) => ({ datasetId, c, ...statColumnsOf(s) })), { transaction });
    await dataset.update(
      {
        status: "ready",
        failureReason: null,
        progressDone: planes.length,
        progressTotal: planes.length,
        littleEndian: structure.littleEndian,
        bigTiff: structure.bigTiff,
        width: first.width,
        height: first.height,
        bitsPerSample: bits,
        sampleFormat: first.sampleFormat[0],
        compression: compressionName(first.compression),
        lossy: planes.some((p) => p.lossy),
        planeCount: planes.length,
        sizeC: dims.sizeC,
        sizeZ: dims.sizeZ,
        sizeT: dims.sizeT,
        dimensionOrder: dims.order,
        dimensionsFrom: ome ? "ome-xml" : "form",
        significantBits: ome?.significantBits ?? dataset.significantBits,
        ceiling: ceiling.ceiling,
        physicalSizeX: ome?.physicalSizeUm.x ?? dataset.physicalSizeX,
        physicalSizeY: ome?.physicalSizeUm.y ?? dataset.physicalSizeY,
        physicalSizeZ: ome?.physicalSizeUm.z ?? dataset.physicalSizeZ,
        timeIncrement: ome?.timeIncrementSeconds ?? dataset.timeIncrement,
        channels,
        thumbnailKey,
        acquisition: {
          byteOrder: structure.littleEndian ? "little-endian (II)" : "big-endian (MM)",
          format: structure.bigTiff ? "BigTIFF" : "TIFF",
          compression: compressionName(first.compression),
          layout: first.layout.kind,
          ceilingFrom: ceiling.from === "significant-bits" ? `SignificantBits = ${ceiling.bits}` : `smallest common bit depth holding the maximum (${stackMax}): ${ceiling.bits}-bit`,
          omeImageName: ome?.name ?? null,
          stackMax,
          stackMin: statsFromHistogram(mergeHistograms(channelHists)).min,
          // Per channel: the smallest b for which every value is a multiple of 2^(16 − b), i.e.
          // b-bit data shifted to the top of a 16-bit container (read by the acquisition check).
          leftJustifiedBits: channelHists.map((h) => (bits === 16 ? ([8, 10, 12, 14].find((b) => isLeftJustified(h as unknown as Histogram, b)) ?? null) : null)),
        },
      },
      { transaction },
    );
  });
}
