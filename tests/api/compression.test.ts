// GET /api/labs/:lab/datasets/compression against the real MariaDB: per codec, the raw pixel bytes
// (width · height · planes · bytes per sample) of the lab's ready datasets against their stored file
// sizes. Files are written by our own TIFF writer (checked in tests/tiff/writer.test.ts) with and
// without Deflate, so the expected sums come from the bytes we uploaded.
import { deflateSync } from "node:zlib";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeDb } from "@/lib/server/db";
import { writeTiff } from "@/lib/tiff/writer";
import { expectErrorShape } from "../helpers/errors";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { uploadFile, waitForIngest } from "../helpers/uploads";

let lab: LabWithMembers;
const W = 64;
const H = 48;

// Smooth ramps compress well under Deflate with horizontal differencing; the noise term keeps it honest.
const plane16 = (k: number) => Uint16Array.from({ length: W * H }, (_, i) => (((i % W) * 40 + Math.floor(i / W) * 3 + k * 11 + ((i * 7919) % 13)) % 4096));
const plane8 = (k: number) => Uint8Array.from({ length: W * H }, (_, i) => ((i % W) * 3 + k) % 256);

async function ingest(bytes: Uint8Array, planes: number, fileName: string, dims = true): Promise<number> {
  const reply = await uploadFile(lab.editor, lab.labId, bytes, { fileName, ...(dims ? { dimensions: { sizeC: 1, sizeZ: 1, sizeT: planes, order: "XYCZT" } } : {}) });
  if (reply.status !== 201) throw new Error(`upload: ${reply.status} ${JSON.stringify(reply.body)}`);
  await waitForIngest(lab.editor, reply.body.datasetId);
  return reply.body.datasetId as number;
}

const files: { plain16: Uint8Array; deflateA: Uint8Array; deflateB: Uint8Array; plain8: Uint8Array; binned: Uint8Array; failed: Uint8Array } = {} as never;

beforeAll(async () => {
  lab = await labWithMembers();
  const deflate = { compression: "deflate" as const, compress: (b: Uint8Array) => new Uint8Array(deflateSync(b)), predictor: true };
  files.plain16 = await writeTiff([plane16(0), plane16(1), plane16(2)], { width: W, height: H, bitsPerSample: 16 });
  files.deflateA = await writeTiff([plane16(3), plane16(4)], { width: W, height: H, bitsPerSample: 16, ...deflate });
  files.deflateB = await writeTiff([plane16(5), plane16(6), plane16(7), plane16(8)], { width: W, height: H, bitsPerSample: 16, ...deflate });
  files.plain8 = await writeTiff([plane8(0), plane8(1)], { width: W, height: H, bitsPerSample: 8 });
  files.binned = await writeTiff([plane16(9)], { width: W, height: H, bitsPerSample: 16, ...deflate });
  files.failed = await writeTiff([plane16(10), plane16(11)], { width: W, height: H, bitsPerSample: 16, ...deflate });
});
afterAll(closeDb);

describe("GET /api/labs/:lab/datasets/compression", () => {
  it("answers an empty lab with no codecs and no overall ratio", async () => {
    const reply = await lab.viewer.get(`/api/labs/${lab.labId}/datasets/compression`);
    expect(reply.status).toBe(200);
    expect(reply.body).toEqual({ codecs: [], overall: null });
  });

  it("sums raw pixel bytes and stored bytes per codec over ready datasets only", async () => {
    await ingest(files.plain16, 3, "plain16.tif");
    await ingest(files.deflateA, 2, "deflate-a.tif");
    await ingest(files.deflateB, 4, "deflate-b.tif");
    await ingest(files.plain8, 2, "plain8.tif");
    // Not counted: one in the bin, one whose ingest failed (no dimensions given for a 2-plane file without OME-XML).
    const binned = await ingest(files.binned, 1, "binned.tif");
    expect((await lab.editor.delete(`/api/datasets/${binned}`)).status).toBe(200);
    const failed = await ingest(files.failed, 2, "failed.tif", false);
    expect((await lab.editor.get(`/api/datasets/${failed}`)).body.dataset.status).toBe("failed");
    // Another lab's dataset is not counted either.
    const other = await lab.outsider.get("/api/labs");
    const otherLabId = other.body.labs[0].id as number;
    const foreign = await uploadFile(lab.outsider, otherLabId, files.deflateA, { fileName: "foreign.tif", dimensions: { sizeC: 1, sizeZ: 1, sizeT: 2, order: "XYCZT" } });
    expect(foreign.status).toBe(201);
    await waitForIngest(lab.outsider, foreign.body.datasetId);

    const reply = await lab.viewer.get(`/api/labs/${lab.labId}/datasets/compression`);
    expect(reply.status).toBe(200);
    const raw16 = (planes: number) => W * H * 2 * planes;
    const deflateRaw = raw16(2) + raw16(4);
    const deflateStored = files.deflateA.length + files.deflateB.length;
    const noneRaw = raw16(3) + W * H * 1 * 2; // the 8-bit file has 1 byte per sample
    const noneStored = files.plain16.length + files.plain8.length;
    expect(reply.body.codecs).toEqual([
      // Equal counts (2 each): alphabetical.
      { codec: "Deflate", datasets: 2, rawBytes: deflateRaw, storedBytes: deflateStored, ratio: deflateRaw / deflateStored },
      { codec: "none", datasets: 2, rawBytes: noneRaw, storedBytes: noneStored, ratio: noneRaw / noneStored },
    ]);
    expect(reply.body.overall).toEqual({
      codec: "all",
      datasets: 4,
      rawBytes: deflateRaw + noneRaw,
      storedBytes: deflateStored + noneStored,
      ratio: (deflateRaw + noneRaw) / (deflateStored + noneStored),
    });
    // Deflate really saved space on these ramps; uncompressed files are a little larger than their pixels.
    expect(reply.body.codecs[0].ratio).toBeGreaterThan(1.5);
    expect(reply.body.codecs[1].ratio).toBeLessThan(1);
    expect(reply.body.codecs[1].ratio).toBeGreaterThan(0.9);
  });

  it("is refused to people outside the lab as if the lab did not exist", async () => {
    const reply = await lab.outsider.get(`/api/labs/${lab.labId}/datasets/compression`);
    expect(reply.status).toBe(404);
    expectErrorShape(reply.body);
  });
});
