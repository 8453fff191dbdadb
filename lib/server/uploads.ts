import "server-only";
import { createHash, randomUUID } from "node:crypto";
import { Readable } from "node:stream";
import { DEFAULT_MAX_UPLOAD_BYTES, DEFAULT_PART_SIZE, type CreateUploadBody, type UploadOut } from "@/lib/schemas/dataset";
import type { Upload } from "@/models";
import type { Actor } from "./labs";
import { audit } from "./audit";
import { db } from "./db";
import { conflict, gone, HttpError, notFound } from "./errors";
import { enqueueIngest } from "./jobs";
import { blobStore } from "./storage";

export const maxUploadBytes = () => Number(process.env.MAX_UPLOAD_BYTES || DEFAULT_MAX_UPLOAD_BYTES);
const partCount = (u: Pick<Upload, "sizeBytes" | "partSize">) => Math.ceil(u.sizeBytes / u.partSize);
const stagingKey = (uploadId: string, part: number) => `staging/${uploadId}/${String(part).padStart(6, "0")}`;

async function uploadOut(upload: Upload): Promise<UploadOut> {
  const parts = await db().UploadPart.findAll({ where: { uploadId: upload.id }, attributes: ["partNumber"], order: [["partNumber", "ASC"]] });
  return {
    id: upload.id,
    fileName: upload.fileName,
    sizeBytes: upload.sizeBytes,
    partSize: upload.partSize,
    partCount: partCount(upload),
    receivedParts: parts.map((p) => p.partNumber),
    status: upload.status,
    failureReason: upload.failureReason ?? null,
    datasetId: upload.datasetId ?? null,
  };
}

export async function createUpload(actor: Actor, labId: number, body: CreateUploadBody): Promise<UploadOut> {
  const limit = maxUploadBytes();
  if (body.sizeBytes > limit) {
    throw new HttpError(413, "invalid_input", `This file is ${body.sizeBytes} bytes; the limit is ${limit} bytes.`, { sizeBytes: "File too large." });
  }
  const upload = await db().Upload.create({
    id: randomUUID(),
    labId,
    userId: actor.id,
    fileName: body.fileName,
    sizeBytes: body.sizeBytes,
    partSize: body.partSize ?? DEFAULT_PART_SIZE,
    status: "open",
    dimensions: { ...(body.dimensions ?? {}), ...(body.title ? { title: body.title } : {}) },
  });
  return uploadOut(upload);
}

/** An upload belongs to the person who started it; anyone else gets 404. */
async function findUpload(labId: number, userId: number, uploadId: string): Promise<Upload> {
  const upload = /^[0-9a-f-]{36}$/.test(uploadId) ? await db().Upload.findOne({ where: { id: uploadId, labId, userId } }) : null;
  if (!upload) throw notFound("That upload");
  return upload;
}

export async function getUpload(labId: number, userId: number, uploadId: string): Promise<UploadOut> {
  return uploadOut(await findUpload(labId, userId, uploadId));
}

/**
 * Stores part `partNumber` (1-based). Parts arrive in order: part n is taken once parts 1…n−1 are
 * stored, so the original is assembled from a complete prefix. Sending a stored part again with the
 * same bytes (a retry after a lost answer) succeeds; with other bytes it is refused.
 */
export async function putPart(labId: number, userId: number, uploadId: string, partNumber: number, bytes: Buffer): Promise<UploadOut> {
  const { UploadPart } = db();
  const upload = await findUpload(labId, userId, uploadId);
  if (upload.status !== "open") throw gone(`This upload is ${upload.status}; start a new one.`);
  const total = partCount(upload);
  if (!Number.isInteger(partNumber) || partNumber < 1 || partNumber > total) {
    throw new HttpError(400, "invalid_input", `Part numbers run from 1 to ${total}.`, { partNumber: "Out of range." });
  }
  const expected = partNumber < total ? upload.partSize : upload.sizeBytes - upload.partSize * (total - 1);
  if (bytes.length !== expected) {
    throw new HttpError(400, "invalid_input", `Part ${partNumber} must have ${expected} bytes; ${bytes.length} arrived.`, { body: "Wrong length." });
  }
  const sha256 = createHash("sha256").update(bytes).digest("hex");
  const stored = await UploadPart.findAll({ where: { uploadId }, attributes: ["partNumber", "sha256"] });
  const same = stored.find((p) => p.partNumber === partNumber);
  if (same) {
    if (same.sha256 === sha256) return uploadOut(upload);
    throw conflict(`Part ${partNumber} was already stored with different bytes.`);
  }
  const nextExpected = stored.length + 1;
  if (partNumber !== nextExpected) throw conflict(`Parts arrive in order: part ${nextExpected} comes next, not part ${partNumber}.`);

  const store = blobStore();
  const key = stagingKey(uploadId, partNumber);
  // A part stored by a request that died before recording it is replaced, never trusted.
  await store.delete(key);
  await store.put(key, bytes);
  try {
    await UploadPart.create({ uploadId, partNumber, sizeBytes: bytes.length, sha256 });
  } catch (error) {
    await store.delete(key);
    throw error;
  }
  return uploadOut(upload);
}

export async function cancelUpload(labId: number, userId: number, uploadId: string): Promise<void> {
  const upload = await findUpload(labId, userId, uploadId);
  if (upload.status === "completed") throw conflict("This upload is complete; delete the dataset instead.");
  await upload.update({ status: "cancelled" });
  await blobStore().deletePrefix(`staging/${uploadId}/`);
}

function assembled(uploadId: string, parts: number): Readable {
  const store = blobStore();
  return Readable.from(
    (async function* () {
      for (let n = 1; n <= parts; n++) {
        for await (const chunk of await store.get(stagingKey(uploadId, n))) yield chunk as Buffer;
      }
    })(),
  );
}

/**
 * Joins the parts into the original (written once), checks its SHA-256 against the one the browser
 * computed, and only then creates the dataset and its ingest job. On a mismatch nothing is kept.
 */
export async function completeUpload(actor: Actor, labId: number, uploadId: string, sha256: string, ip: string | null) {
  const { Upload, UploadPart, Dataset, sequelize } = db();
  const upload = await findUpload(labId, actor.id, uploadId);
  if (upload.status === "completed" && upload.datasetId) return { datasetId: upload.datasetId };
  if (upload.status !== "open") throw gone(`This upload is ${upload.status}; start a new one.`);
  const total = partCount(upload);
  const received = await UploadPart.count({ where: { uploadId } });
  if (received !== total) throw conflict(`${received} of ${total} parts have arrived; send the rest first.`);
  // Only one request may assemble: the status flips atomically from open to completing.
  const [claimed] = await Upload.update({ status: "completing" }, { where: { id: uploadId, status: "open" } });
  if (claimed === 0) throw conflict("This upload is already being completed.");

  const store = blobStore();
  const key = `originals/${labId}/${uploadId}.tif`;
  try {
    await store.delete(key); // left over by a completion that died half-way; never a finished dataset's file
    const written = await store.put(key, assembled(uploadId, total), { contentType: "image/tiff" });
    if (written.size !== upload.sizeBytes || written.sha256 !== sha256) {
      await store.delete(key);
      const reason =
        written.sha256 !== sha256
          ? `The file's SHA-256 on the server (${written.sha256}) differs from the one computed in your browser (${sha256}). Nothing was stored; upload it again.`
          : `The server received ${written.size} bytes, not ${upload.sizeBytes}. Nothing was stored.`;
      await upload.update({ status: "failed", failureReason: reason });
      await store.deletePrefix(`staging/${uploadId}/`);
      throw new HttpError(422, "invalid_input", reason, { sha256: "Checksum mismatch." });
    }
    const dims = (upload.dimensions ?? {}) as Record<string, unknown>;
    const dataset = await sequelize.transaction(async (transaction) => {
      const created = await Dataset.create(
        {
          labId,
          uploadedById: actor.id,
          title: typeof dims.title === "string" ? dims.title : upload.fileName.replace(/\.(ome\.)?tiff?$/i, ""),
          originalName: upload.fileName,
          status: "queued",
          sizeBytes: written.size,
          sha256: written.sha256,
          blobKey: key,
          sizeC: (dims.sizeC as number) ?? null,
          sizeZ: (dims.sizeZ as number) ?? null,
          sizeT: (dims.sizeT as number) ?? null,
          dimensionOrder: (dims.order as string) ?? null,
          physicalSizeX: (dims.physicalSizeXY as number) ?? null,
          physicalSizeY: (dims.physicalSizeXY as number) ?? null,
          physicalSizeZ: (dims.physicalSizeZ as number) ?? null,
          timeIncrement: (dims.timeIncrement as number) ?? null,
        },
        { transaction },
      );
      await enqueueIngest(created.id, transaction);
      await upload.update({ status: "completed", datasetId: created.id }, { transaction });
      await audit({ action: "dataset.uploaded", labId, actorId: actor.id, target: `${created.id} ${upload.fileName}`, ip, detail: { sha256, size: written.size } }, transaction);
      return created;
    });
    await store.deletePrefix(`staging/${uploadId}/`);
    return { datasetId: dataset.id };
  } catch (error) {
    if (!(error instanceof HttpError)) {
      await store.delete(key).catch(() => undefined);
      // The parts are still there: open the upload again so the person can retry. A plain
      // upload.update() would be skipped, because the instance still says "open" (the flip to
      // "completing" above went through Upload.update), leaving the upload stuck in "completing".
      await Upload.update({ status: "open" }, { where: { id: uploadId, status: "completing" } }).catch(() => undefined);
    }
    throw error;
  }
}
