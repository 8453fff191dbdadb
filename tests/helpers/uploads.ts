// Uploads a file through the real resumable-upload API, part by part, as the browser does.
import { createHash } from "node:crypto";
import type { Client, Reply } from "./http";

export const sha256 = (bytes: Uint8Array) => createHash("sha256").update(bytes).digest("hex");

export async function startUpload(client: Client, labId: number, bytes: Uint8Array, options: { fileName?: string; partSize?: number; dimensions?: unknown; title?: string } = {}) {
  const reply = await client.post(`/api/labs/${labId}/uploads`, {
    fileName: options.fileName ?? "stack.ome.tif",
    sizeBytes: bytes.length,
    partSize: options.partSize ?? 4096,
    ...(options.dimensions ? { dimensions: options.dimensions } : {}),
    ...(options.title ? { title: options.title } : {}),
  });
  if (reply.status !== 201) throw new Error(`create upload: ${reply.status} ${JSON.stringify(reply.body)}`);
  return reply.body.upload as { id: string; partSize: number; partCount: number };
}

export function putPart(client: Client, labId: number, uploadId: string, n: number, bytes: Uint8Array): Promise<Reply> {
  return client.raw("PUT", `/api/labs/${labId}/uploads/${uploadId}/parts/${n}`, {
    body: bytes,
    headers: { "content-type": "application/octet-stream" },
  });
}

export function partOf(bytes: Uint8Array, partSize: number, n: number): Uint8Array {
  return bytes.subarray((n - 1) * partSize, Math.min(n * partSize, bytes.length));
}

/** Whole upload; returns the completion reply (201 with datasetId on success). */
export async function uploadFile(client: Client, labId: number, bytes: Uint8Array, options: Parameters<typeof startUpload>[3] = {}): Promise<Reply> {
  const upload = await startUpload(client, labId, bytes, options);
  for (let n = 1; n <= upload.partCount; n++) {
    const reply = await putPart(client, labId, upload.id, n, partOf(bytes, upload.partSize, n));
    if (reply.status !== 200) throw new Error(`part ${n}: ${reply.status} ${JSON.stringify(reply.body)}`);
  }
  return client.post(`/api/labs/${labId}/uploads/${upload.id}/complete`, { sha256: sha256(bytes) });
}

/** Polls the dataset until the ingest worker has finished with it (ready or failed). */
export async function waitForIngest(client: Client, datasetId: number, timeoutMs = 30_000): Promise<any> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const reply = await client.get(`/api/datasets/${datasetId}`);
    if (reply.status !== 200) throw new Error(`dataset ${datasetId}: ${reply.status} ${JSON.stringify(reply.body)}`);
    if (reply.body.dataset.status === "ready" || reply.body.dataset.status === "failed") return reply.body;
    await new Promise((r) => setTimeout(r, 150));
  }
  throw new Error(`dataset ${datasetId} was not ingested within ${timeoutMs} ms`);
}
