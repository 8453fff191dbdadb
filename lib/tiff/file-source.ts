import { open, type FileHandle } from "node:fs/promises";
import type { ByteSource } from "./byte-source";

/** A ByteSource over a local file (server ingest and tests only: uses node:fs). Call close() when done. */
export async function fileSource(path: string): Promise<ByteSource & { close(): Promise<void> }> {
  const handle: FileHandle = await open(path, "r");
  const { size } = await handle.stat();
  return {
    size,
    async read(offset, length, signal) {
      if (signal?.aborted) throw signal.reason instanceof Error ? signal.reason : new DOMException("Read aborted", "AbortError");
      const n = Math.max(0, Math.min(length, size - offset));
      // Large reads skip zero-filling (allocUnsafe gives such sizes their own ArrayBuffer); small ones
      // would come from Node's shared pool, whose ArrayBuffer must not be handed out.
      const unsafe = n >= 65536 ? Buffer.allocUnsafe(n) : null;
      const buf = unsafe && unsafe.byteOffset === 0 && unsafe.buffer.byteLength === n ? new Uint8Array(unsafe.buffer, 0, n) : new Uint8Array(n);
      let done = 0;
      while (done < n) {
        const { bytesRead } = await handle.read(buf, done, n - done, offset + done);
        if (bytesRead === 0) break;
        done += bytesRead;
      }
      return done === n ? buf.buffer : buf.slice(0, done).buffer;
    },
    close: () => handle.close(),
  };
}
