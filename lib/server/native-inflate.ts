import "server-only";
import { inflate } from "node:zlib";

// Output buffer per zlib call: the whole block when it is small, so one block is one trip to the
// thread pool; large tiles take several trips rather than one huge allocation.
const MAX_CHUNK = 4 * 1024 * 1024;

/**
 * Node's native zlib inflate, run on libuv's thread pool: several Deflate blocks inflate at once
 * on other cores while the main thread counts. Same bytes as inflateSync (same zlib); errors reject.
 */
export function inflateOffThread(block: Uint8Array, expectedBytes: number): Promise<Uint8Array> {
  const chunkSize = Math.min(MAX_CHUNK, Math.max(64 * 1024, expectedBytes + 1024));
  return new Promise((resolve, reject) => {
    inflate(block, { chunkSize }, (error, out) => (error ? reject(error) : resolve(out)));
  });
}
