/** Random access to the bytes of one stored file: a Buffer, a local file, or HTTP range reads. */
export interface ByteSource {
  /** Total size in bytes. */
  readonly size: number;
  /** Reads `length` bytes at `offset`; a read past the end returns the bytes that exist. */
  read(offset: number, length: number, signal?: AbortSignal): Promise<ArrayBuffer>;
}

export class ByteSourceError extends Error {
  override name = "ByteSourceError";
}

function throwIfAborted(signal?: AbortSignal): void {
  if (signal?.aborted) throw signal.reason instanceof Error ? signal.reason : new DOMException("Read aborted", "AbortError");
}

function checkRange(offset: number, length: number): void {
  if (!Number.isSafeInteger(offset) || offset < 0 || !Number.isSafeInteger(length) || length < 0) {
    throw new ByteSourceError(`Invalid byte range: offset ${offset}, length ${length}`);
  }
}

/** A source over bytes already in memory (an upload in a test, a fetched file in the worker). */
export function bufferSource(buf: ArrayBuffer | ArrayBufferView): ByteSource {
  const bytes = buf instanceof ArrayBuffer ? new Uint8Array(buf) : new Uint8Array(buf.buffer, buf.byteOffset, buf.byteLength);
  return {
    size: bytes.byteLength,
    async read(offset, length, signal) {
      throwIfAborted(signal);
      checkRange(offset, length);
      // slice() copies, so the caller may transfer or mutate the result freely.
      return bytes.slice(offset, Math.min(offset + length, bytes.byteLength)).buffer;
    },
  };
}

export interface WindowedSourceOptions {
  /** Bytes fetched per window (aligned to multiples of this size). Default 64 KiB. */
  windowSize?: number;
  /** Windows kept in memory, least recently used dropped first. Default 256 (16 MiB at 64 KiB). */
  maxWindows?: number;
}

/**
 * Caches aligned windows of another source, so that many small reads close together (IFDs, tag
 * arrays) cost one underlying read. Meant for metadata; large pixel reads should bypass it.
 */
export function windowedSource(inner: ByteSource, options: WindowedSourceOptions = {}): ByteSource & { readonly underlyingReads: number } {
  const windowSize = options.windowSize ?? 65536;
  const maxWindows = options.maxWindows ?? 256;
  const windows = new Map<number, Promise<Uint8Array>>();
  let underlyingReads = 0;

  function windowAt(index: number, signal?: AbortSignal): Promise<Uint8Array> {
    const hit = windows.get(index);
    if (hit) {
      windows.delete(index);
      windows.set(index, hit);
      return hit;
    }
    underlyingReads++;
    const pending = inner.read(index * windowSize, windowSize, signal).then((b) => new Uint8Array(b));
    // A failed or aborted read must not poison the cache for the next caller.
    pending.catch(() => windows.delete(index));
    windows.set(index, pending);
    while (windows.size > maxWindows) windows.delete(windows.keys().next().value as number);
    return pending;
  }

  return {
    size: inner.size,
    get underlyingReads() {
      return underlyingReads;
    },
    async read(offset, length, signal) {
      throwIfAborted(signal);
      checkRange(offset, length);
      const end = Math.min(offset + length, inner.size);
      if (end <= offset) return new ArrayBuffer(0);
      const first = Math.floor(offset / windowSize);
      const last = Math.floor((end - 1) / windowSize);
      const parts = await Promise.all(Array.from({ length: last - first + 1 }, (_, i) => windowAt(first + i, signal)));
      const out = new Uint8Array(end - offset);
      for (let i = 0; i < parts.length; i++) {
        const winStart = (first + i) * windowSize;
        const from = Math.max(offset, winStart) - winStart;
        const to = Math.min(end, winStart + parts[i].byteLength) - winStart;
        if (to > from) out.set(parts[i].subarray(from, to), winStart + from - offset);
      }
      return out.buffer;
    },
  };
}

export interface ReadAheadOptions {
  /** Reads of at most this many bytes go through the window cache; larger ones go straight through. Default 4 KiB. */
  smallRead?: number;
  /** Window size for the small reads. Default 16 KiB. */
  windowSize?: number;
  /** Windows kept. Default 64. */
  maxWindows?: number;
}

/**
 * Opening a plane by its IFD offset takes several small reads one after the other (the entry count,
 * the entries, then the strip or tile offset and byte-count arrays), which writers place side by
 * side. Over HTTP each would be a request of its own; through this wrapper they come from one cached
 * window, so a plane costs one request for its metadata (pass it as decodePlane's metadataSource).
 * Large reads go straight through. A window is fetched with the signal of the read that asked first;
 * if that read is cancelled while another still waits for the same window (a newer render sharing a
 * plane with a cancelled prefetch), the waiting read fetches it again rather than failing.
 */
export function readAheadSource(inner: ByteSource, options: ReadAheadOptions = {}): ByteSource & { readonly underlyingReads: number } {
  const smallRead = options.smallRead ?? 4096;
  const windows = windowedSource(inner, { windowSize: options.windowSize ?? 16384, maxWindows: options.maxWindows ?? 64 });
  let direct = 0;
  return {
    size: inner.size,
    get underlyingReads() {
      return windows.underlyingReads + direct;
    },
    async read(offset, length, signal) {
      if (length > smallRead) {
        direct++;
        return inner.read(offset, length, signal);
      }
      for (let attempt = 0; ; attempt++) {
        try {
          const bytes = await windows.read(offset, length, signal);
          throwIfAborted(signal);
          return bytes;
        } catch (error) {
          const cancelledForAnother = error instanceof Error && error.name === "AbortError" && !signal?.aborted;
          if (!cancelledForAnother || attempt >= 2) throw error;
        }
      }
    },
  };
}
