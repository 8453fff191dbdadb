import "server-only";
import { inflateSync } from "node:zlib";
import { PNG } from "pngjs";
import { downscaleRgba } from "@/lib/imaging/mapping";
import { parseHex } from "@/lib/imaging/colour-tables";
import type { ViewStateBody } from "@/lib/schemas/preset";
import { decodePlane } from "@/lib/tiff/decode";
import { readTiffHeader } from "@/lib/tiff/structure";
import type { Dataset } from "@/models";
import { renderLayers } from "@/workers/bench-api";
import { blobByteSource } from "./blob-source";
import { db } from "./db";
import { blobStore } from "./storage";

/** Longest side of a link preview, in pixels: large enough to recognise in chat, small to send. */
export const PREVIEW_SIDE = 320;

/**
 * Renders a view snapshot the way the bench does (same render step, workers/bench-api.ts
 * renderLayers) from the stored original, box-downscaled to PREVIEW_SIDE, as PNG. Derived data: it is
 * stored under its own key, the original is only read.
 */
export async function renderViewPng(dataset: Dataset, state: ViewStateBody, maxSide = PREVIEW_SIDE): Promise<Buffer> {
  const width = dataset.width ?? 0;
  const height = dataset.height ?? 0;
  if (!width || !height) throw new Error(`Dataset ${dataset.id} has no plane size yet.`);
  const visible = state.channels.filter((ch) => ch.visible);
  const planes = await db().Plane.findAll({
    where: { datasetId: dataset.id, z: state.z, t: state.t },
    attributes: ["c", "ifdOffset"],
  });
  const source = blobByteSource(blobStore(), dataset.blobKey, dataset.sizeBytes);
  const header = await readTiffHeader(source);
  const layers = [];
  for (const ch of visible) {
    const plane = planes.find((p) => p.c === ch.c);
    if (!plane) continue;
    const decoded = await decodePlane(source, Number(plane.ifdOffset), { header, inflate: (block) => inflateSync(block) });
    if (decoded.data instanceof Float32Array) continue; // float planes are not mapped by the bench either
    layers.push({ pixels: decoded.data, black: ch.black, white: ch.white, colour: parseHex(ch.colour), gamma: ch.gamma, tableId: ch.tableId });
  }
  const rgba = renderLayers(layers, width * height, state.blend, { ceiling: dataset.ceiling ?? 65535 });
  const small = downscaleRgba(rgba, width, height, maxSide);
  const png = new PNG({ width: small.width, height: small.height });
  png.data = Buffer.from(small.rgba.buffer, small.rgba.byteOffset, small.rgba.byteLength);
  return PNG.sync.write(png);
}
