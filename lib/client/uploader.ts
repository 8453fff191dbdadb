"use client";

// The browser side of a resumable upload: parts of DEFAULT_PART_SIZE sent in order with retries,
// a SHA-256 of the whole file computed while sending (the server checks it at the end), progress
// with rate and time left, cancel, and resume after a reload (pending uploads kept in IndexedDB).
import { sha256 } from "@noble/hashes/sha2";
import { bytesToHex } from "@noble/hashes/utils";
import { del, entries, set } from "idb-keyval";
import type { DimensionsBody, UploadOut } from "@/lib/schemas/dataset";
import { DEFAULT_PART_SIZE } from "@/lib/schemas/dataset";
import type { ByteSource } from "@/lib/tiff/byte-source";
import { parseOmeXml } from "@/lib/tiff/ome";
import { readTiffStructure } from "@/lib/tiff/structure";
import { api, ApiError } from "./api";

export interface FileFacts {
  planeCount: number;
  width: number;
  height: number;
  bits: number;
  hasOme: boolean;
  lossy: boolean;
  /** Why this file cannot be taken, in words; null when it looks fine. */
  problem: string | null;
}

export function blobSource(file: Blob): ByteSource {
  return {
    size: file.size,
    read: async (offset, length) => file.slice(offset, offset + length).arrayBuffer(),
  };
}

/** Reads the file's TIFF structure locally, so a file without OME-XML can be asked for its dimensions before upload. */
export async function inspectFile(file: File): Promise<FileFacts> {
  try {
    const structure = await readTiffStructure(blobSource(file));
    const planes = structure.ifds.filter((ifd) => (ifd.subfileType & 1) === 0);
    const first = planes[0];
    let hasOme = false;
    if (first?.imageDescription?.includes("<OME")) {
      parseOmeXml(first.imageDescription);
      hasOme = true;
    }
    const unsupported = planes.find((p) => !p.supported);
    return {
      planeCount: planes.length,
      width: first?.width ?? 0,
      height: first?.height ?? 0,
      bits: first?.bitsPerSample[0] ?? 0,
      hasOme,
      lossy: planes.some((p) => p.lossy),
      problem: !first ? "The file holds no image planes." : unsupported ? `Plane ${unsupported.index + 1}: ${unsupported.unsupportedReason}` : null,
    };
  } catch (error) {
    return { planeCount: 0, width: 0, height: 0, bits: 0, hasOme: false, lossy: false, problem: error instanceof Error ? error.message : "Not a readable TIFF file." };
  }
}

export interface Progress {
  sentBytes: number;
  totalBytes: number;
  /** Bytes per second over this session's sending. */
  rate: number;
  /** Seconds left at the current rate; null until a rate is known. */
  secondsLeft: number | null;
  phase: "hashing" | "sending" | "checking" | "done";
}

interface Pending {
  uploadId: string;
  labId: number;
  name: string;
  size: number;
  lastModified: number;
}

const pendingKey = (labId: number, file: { name: string; size: number; lastModified: number }) => `upload:${labId}:${file.name}:${file.size}:${file.lastModified}`;

export async function pendingUploads(labId: number): Promise<Pending[]> {
  const all = await entries<string, Pending>().catch(() => []);
  return all.filter(([key]) => String(key).startsWith(`upload:${labId}:`)).map(([, value]) => value);
}

async function withRetries<T>(attempt: () => Promise<T>, signal: AbortSignal, tries = 4): Promise<T> {
  for (let i = 1; ; i++) {
    try {
      return await attempt();
    } catch (error) {
      const retryable = error instanceof ApiError && (error.status === 0 || error.status >= 500);
      if (!retryable || i >= tries || signal.aborted) throw error;
      await new Promise((r) => setTimeout(r, 500 * 2 ** i));
    }
  }
}

async function sendPart(labId: number, uploadId: string, n: number, bytes: ArrayBuffer, signal: AbortSignal): Promise<UploadOut> {
  let response: Response;
  try {
    response = await fetch(`/api/labs/${labId}/uploads/${uploadId}/parts/${n}`, {
      method: "PUT",
      body: bytes,
      headers: { "Content-Type": "application/octet-stream" },
      signal,
    });
  } catch (error) {
    if (signal.aborted) throw error;
    throw new ApiError(0, "network", "The connection dropped while sending a part.");
  }
  const payload = await response.json().catch(() => null);
  if (!response.ok) throw new ApiError(response.status, payload?.error?.code ?? "internal", payload?.error?.message ?? `Part ${n} failed (${response.status}).`);
  return payload.upload as UploadOut;
}

/**
 * Uploads (or resumes) one file. Parts the server already holds are only hashed locally, not sent
 * again. Returns the new dataset's id.
 */
export async function uploadFile(
  labId: number,
  file: File,
  options: { dimensions?: DimensionsBody; signal: AbortSignal; onProgress: (p: Progress) => void; partSize?: number },
): Promise<number> {
  const { signal, onProgress } = options;
  const key = pendingKey(labId, file);
  const previous = (await pendingUploads(labId)).find((p) => pendingKey(labId, p) === key);
  let upload: UploadOut | null = null;
  if (previous) {
    upload = await api<{ upload: UploadOut }>(`/api/labs/${labId}/uploads/${previous.uploadId}`).then((r) => r.upload).catch(() => null);
    if (upload && upload.status !== "open") upload = null;
  }
  if (!upload) {
    upload = (
      await api<{ upload: UploadOut }>(`/api/labs/${labId}/uploads`, {
        body: { fileName: file.name, sizeBytes: file.size, partSize: options.partSize ?? DEFAULT_PART_SIZE, dimensions: options.dimensions },
      })
    ).upload;
    await set(key, { uploadId: upload.id, labId, name: file.name, size: file.size, lastModified: file.lastModified } satisfies Pending).catch(() => undefined);
  }

  const hasher = sha256.create();
  const received = new Set(upload.receivedParts);
  const started = performance.now();
  let sentThisSession = 0;
  let done = 0;
  for (let n = 1; n <= upload.partCount; n++) {
    signal.throwIfAborted();
    const bytes = await file.slice((n - 1) * upload.partSize, Math.min(n * upload.partSize, file.size)).arrayBuffer();
    hasher.update(new Uint8Array(bytes));
    if (!received.has(n)) {
      const current = upload;
      await withRetries(() => sendPart(labId, current.id, n, bytes, signal), signal);
      sentThisSession += bytes.byteLength;
    }
    done += bytes.byteLength;
    const seconds = (performance.now() - started) / 1000;
    const rate = seconds > 0 ? sentThisSession / seconds : 0;
    onProgress({ sentBytes: done, totalBytes: file.size, rate, secondsLeft: rate > 0 ? (file.size - done) / rate : null, phase: received.has(n) ? "hashing" : "sending" });
  }
  onProgress({ sentBytes: file.size, totalBytes: file.size, rate: 0, secondsLeft: 0, phase: "checking" });
  const { datasetId } = await api<{ datasetId: number }>(`/api/labs/${labId}/uploads/${upload.id}/complete`, {
    body: { sha256: bytesToHex(hasher.digest()) },
  });
  await del(key).catch(() => undefined);
  onProgress({ sentBytes: file.size, totalBytes: file.size, rate: 0, secondsLeft: 0, phase: "done" });
  return datasetId;
}

export async function cancelUpload(labId: number, file: File): Promise<void> {
  const key = pendingKey(labId, file);
  const previous = (await pendingUploads(labId)).find((p) => pendingKey(labId, p) === key);
  if (previous) await api(`/api/labs/${labId}/uploads/${previous.uploadId}`, { method: "DELETE" }).catch(() => undefined);
  await del(key).catch(() => undefined);
}

export async function forgetPending(labId: number, pending: Pending): Promise<void> {
  await api(`/api/labs/${labId}/uploads/${pending.uploadId}`, { method: "DELETE" }).catch(() => undefined);
  await del(pendingKey(labId, pending)).catch(() => undefined);
}
