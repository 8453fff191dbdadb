import { ByteSourceError, type ByteSource } from "./byte-source";

/** An HTTP answer that is not the byte range asked for; `status` is the HTTP status (0: no answer). */
export class HttpSourceError extends ByteSourceError {
  override name = "HttpSourceError";
  constructor(
    message: string,
    readonly status: number,
  ) {
    super(message);
  }
}

export interface HttpSourceOptions {
  /** Total size in bytes when already known (from the dataset row); saves one request. */
  size?: number;
  /** Injected for tests; defaults to the global fetch. */
  fetch?: typeof globalThis.fetch;
  /** Extra request headers sent with every read. */
  headers?: Record<string, string>;
  /** Cancels the size probe of `httpSource` itself. */
  signal?: AbortSignal;
}

const STATUS_WORDS: Record<number, string> = {
  400: "bad request",
  401: "not signed in",
  403: "forbidden",
  404: "not found",
  410: "gone",
  416: "range not satisfiable",
  500: "server error",
  502: "bad gateway",
  503: "unavailable",
};

// Answers from a remembered presigned URL that mean it has expired (S3 says 403; others 400/410).
const EXPIRED = new Set([400, 401, 403, 410]);

/** Parses `bytes a-b/total` (RFC 9110 §14.4); total may be `*` (unknown). Null when malformed. */
export function parseContentRange(value: string | null): { start: number; end: number; total: number | null } | null {
  const m = value === null ? null : /^\s*bytes\s+(\d+)-(\d+)\/(\d+|\*)\s*$/i.exec(value);
  if (!m) return null;
  const start = Number(m[1]);
  const end = Number(m[2]);
  const total = m[3] === "*" ? null : Number(m[3]);
  if (!Number.isSafeInteger(start) || !Number.isSafeInteger(end) || end < start) return null;
  if (total !== null && (!Number.isSafeInteger(total) || end >= total)) return null;
  return { start, end, total };
}

/** Total size from a 416 answer's `Content-Range: bytes *\/N`. */
function unsatisfiedTotal(value: string | null): number | null {
  const m = value === null ? null : /^\s*bytes\s+\*\/(\d+)\s*$/i.exec(value);
  return m ? Number(m[1]) : null;
}

function isAbort(e: unknown): boolean {
  return e instanceof Error && (e.name === "AbortError" || e.name === "TimeoutError");
}

/**
 * A ByteSource over an HTTP URL that answers Range requests with 206 (the datasets file endpoint,
 * or the presigned object-store URL it redirects to). The size comes from Content-Range, never
 * from Content-Length, which Next.js route handlers drop. Every read honours its AbortSignal, so
 * the bench can drop a stale read while a person scrubs through z.
 *
 * After a redirect the final URL is remembered and read directly (one round trip instead of two);
 * when it stops answering (a presigned URL expires) the original URL is asked again, once.
 */
export async function httpSource(url: string, options: HttpSourceOptions = {}): Promise<ByteSource> {
  const doFetch = options.fetch ?? globalThis.fetch.bind(globalThis);
  const headers = options.headers ?? {};
  let resolved: string | null = null;

  async function request(from: number, to: number, signal: AbortSignal | undefined): Promise<Response> {
    const target = resolved ?? url;
    const init: RequestInit = { headers: { ...headers, Range: `bytes=${from}-${to}` }, signal, redirect: "follow" };
    let response: Response;
    try {
      response = await doFetch(target, init);
      if (resolved !== null && EXPIRED.has(response.status)) {
        // Drain the refusal so the connection can be reused, then ask the original URL.
        await response.body?.cancel();
        resolved = null;
        response = await doFetch(url, init);
      }
    } catch (e) {
      if (isAbort(e)) throw e;
      throw new HttpSourceError(`Could not reach ${url} for bytes ${from}–${to}: ${e instanceof Error ? e.message : String(e)}`, 0);
    }
    if (response.redirected && response.url) resolved = response.url;
    return response;
  }

  async function fail(response: Response, from: number, to: number): Promise<never> {
    await response.body?.cancel().catch(() => undefined);
    const words = STATUS_WORDS[response.status] ? ` (${STATUS_WORDS[response.status]})` : "";
    if (response.status === 200) {
      throw new HttpSourceError(
        `${url} answered 200 with the whole file instead of bytes ${from}–${to}: the server does not support range requests`,
        200,
      );
    }
    if (response.status === 416) {
      const total = unsatisfiedTotal(response.headers.get("content-range"));
      throw new HttpSourceError(
        `${url} refused bytes ${from}–${to} as out of range${total !== null ? `; the file is ${total} bytes` : ""} (has the file changed?)`,
        416,
      );
    }
    throw new HttpSourceError(`${url} answered ${response.status}${words} for bytes ${from}–${to}`, response.status);
  }

  async function fetchRange(from: number, to: number, signal: AbortSignal | undefined) {
    const response = await request(from, to, signal);
    if (response.status !== 206) return fail(response, from, to);
    const range = parseContentRange(response.headers.get("content-range"));
    if (!range) {
      await response.body?.cancel().catch(() => undefined);
      throw new HttpSourceError(`${url} answered 206 without a usable Content-Range for bytes ${from}–${to}`, 206);
    }
    return { response, range };
  }

  let size = options.size;
  if (size === undefined) {
    // One-byte probe: a file of any length answers bytes=0-0 with its total in Content-Range.
    const { response, range } = await fetchRange(0, 0, options.signal);
    await response.arrayBuffer();
    if (range.total === null) throw new HttpSourceError(`${url} did not tell the file's size (Content-Range total is *)`, 206);
    size = range.total;
  }
  if (!Number.isSafeInteger(size) || size < 0) throw new ByteSourceError(`Invalid file size ${size} for ${url}`);
  const total = size;

  return {
    size: total,
    async read(offset, length, signal) {
      if (signal?.aborted) throw signal.reason instanceof Error ? signal.reason : new DOMException("Read aborted", "AbortError");
      if (!Number.isSafeInteger(offset) || offset < 0 || !Number.isSafeInteger(length) || length < 0) {
        throw new ByteSourceError(`Invalid byte range: offset ${offset}, length ${length}`);
      }
      const end = Math.min(offset + length, total);
      // A read at or past the end returns the bytes that exist: none, without asking the server.
      if (end <= offset) return new ArrayBuffer(0);
      const last = end - 1;
      const { response, range } = await fetchRange(offset, last, signal);
      if (range.start !== offset || range.end !== last) {
        await response.body?.cancel().catch(() => undefined);
        throw new HttpSourceError(`${url} answered bytes ${range.start}–${range.end} when asked for ${offset}–${last}`, 206);
      }
      if (range.total !== null && range.total !== total) {
        await response.body?.cancel().catch(() => undefined);
        throw new HttpSourceError(`${url} is now ${range.total} bytes long, not ${total}: the file changed while it was read`, 206);
      }
      const body = await response.arrayBuffer();
      if (body.byteLength !== end - offset) {
        throw new HttpSourceError(`${url} sent ${body.byteLength} bytes for a ${end - offset}-byte range ${offset}–${last}`, 206);
      }
      return body;
    },
  };
}
