import "server-only";
import type { ByteSource } from "@/lib/tiff/byte-source";
import type { BlobStore } from "./storage";

async function collect(stream: NodeJS.ReadableStream): Promise<Buffer> {
  const chunks: Buffer[] = [];
  for await (const chunk of stream) chunks.push(typeof chunk === "string" ? Buffer.from(chunk) : (chunk as Buffer));
  return Buffer.concat(chunks);
}

/** Reads a stored object by byte ranges, so TIFF parsing never loads the whole file. */
export function blobByteSource(store: BlobStore, key: string, size: number): ByteSource {
  return {
    size,
    async read(offset, length, signal) {
      signal?.throwIfAborted();
      if (length <= 0) return new ArrayBuffer(0);
      const end = Math.min(offset + length, size) - 1;
      const buf = await collect(await store.get(key, { start: offset, end }));
      // Buffer.concat gives large results their own ArrayBuffer: hand it over without another copy.
      if (buf.byteOffset === 0 && buf.buffer.byteLength === buf.byteLength) return buf.buffer as ArrayBuffer;
      return buf.buffer.slice(buf.byteOffset, buf.byteOffset + buf.byteLength) as ArrayBuffer;
    },
  };
}
