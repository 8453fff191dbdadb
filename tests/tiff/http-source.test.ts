import { createServer, type IncomingMessage, type ServerResponse } from "node:http";
import type { AddressInfo } from "node:net";
import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { httpSource, parseContentRange } from "@/lib/tiff/http-source";
import { bufferSource } from "@/lib/tiff/byte-source";
import { decodePlane } from "@/lib/tiff/decode";
import { readTiffStructure } from "@/lib/tiff/structure";
import { writeTiff } from "@/lib/tiff/writer";

// A real 3-plane 16-bit TIFF, 40 × 30, with values that differ in every byte position.
const W = 40;
const H = 30;
const planes = [0, 1, 2].map((k) => Uint16Array.from({ length: W * H }, (_, i) => (i * 97 + k * 4099) % 65536));
let file: Uint8Array;
let ifdOffsets: number[];

interface Seen {
  path: string;
  range: string | undefined;
}
const seen: Seen[] = [];
let base = "";
let presignedIssued = 0;
const presignedUsed = new Set<string>();
/** Resolves when the server sees the socket of the held request close. */
let heldClosed: Promise<void> = Promise.resolve();
let markHeldClosed = () => {};

function sendRange(req: IncomingMessage, res: ServerResponse, bytes: Uint8Array): void {
  const m = /^bytes=(\d+)-(\d*)$/.exec(req.headers.range ?? "");
  if (!m) {
    res.writeHead(200, { "Content-Type": "image/tiff" }).end(bytes);
    return;
  }
  const start = Number(m[1]);
  const end = Math.min(m[2] === "" ? bytes.length - 1 : Number(m[2]), bytes.length - 1);
  if (start >= bytes.length) {
    res.writeHead(416, { "Content-Range": `bytes */${bytes.length}` }).end();
    return;
  }
  // No Content-Length, as from a Next.js route handler (chunked transfer).
  res.writeHead(206, { "Content-Range": `bytes ${start}-${end}/${bytes.length}`, "Transfer-Encoding": "chunked" });
  res.end(bytes.subarray(start, end + 1));
}

const server = createServer((req, res) => {
  const path = new URL(req.url ?? "/", "http://x").pathname;
  seen.push({ path, range: req.headers.range });
  switch (path) {
    case "/file":
      return sendRange(req, res, file);
    case "/whole":
      return void res.writeHead(200, { "Content-Type": "image/tiff" }).end(file);
    case "/missing":
      return void res.writeHead(404).end("no such dataset");
    case "/redirect":
      return void res.writeHead(302, { Location: `${base}/presigned?sig=abc` }).end();
    case "/presigned":
      return sendRange(req, res, file);
    case "/redirect-expiring":
      return void res.writeHead(302, { Location: `${base}/expiring?sig=${presignedIssued++}` }).end();
    case "/expiring": {
      // Each signed URL is good for one read, then refused as S3 refuses an expired signature.
      const sig = new URL(req.url ?? "/", "http://x").searchParams.get("sig") ?? "";
      if (presignedUsed.has(sig)) return void res.writeHead(403).end("Request has expired");
      presignedUsed.add(sig);
      return sendRange(req, res, file);
    }
    case "/lying":
      res.writeHead(206, { "Content-Range": `bytes 0-3/${file.length}` });
      return void res.end(file.subarray(0, 4));
    case "/held": {
      // Headers and half the body, then nothing: the client must give up by aborting.
      res.writeHead(206, { "Content-Range": `bytes 0-999/${file.length}` });
      res.write(file.subarray(0, 500));
      req.socket.once("close", () => markHeldClosed());
      return;
    }
    default:
      res.writeHead(500).end();
  }
});

beforeAll(async () => {
  file = await writeTiff(planes, { width: W, height: H, bitsPerSample: 16, rowsPerStrip: 7 });
  ifdOffsets = (await readTiffStructure(bufferSource(file))).ifds.map((i) => i.offset);
  await new Promise<void>((resolve) => server.listen(0, "127.0.0.1", resolve));
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});

afterAll(async () => {
  server.closeAllConnections();
  await new Promise((resolve) => server.close(resolve));
});

describe("httpSource", () => {
  test("learns the size from Content-Range of a one-byte probe, with no Content-Length", async () => {
    const src = await httpSource(`${base}/file`);
    expect(src.size).toBe(file.length);
  });

  test("returns exactly the bytes of several ranges, including the first, the last and one past the end", async () => {
    const src = await httpSource(`${base}/file`, { size: file.length });
    const cases: [number, number][] = [
      [0, 8],
      [1, 1],
      [123, 456],
      [file.length - 10, 10],
      [file.length - 3, 50],
    ];
    for (const [offset, length] of cases) {
      const got = new Uint8Array(await src.read(offset, length));
      expect(got).toEqual(file.slice(offset, Math.min(offset + length, file.length)));
    }
    const ranges = seen.filter((s) => s.path === "/file").slice(-cases.length).map((s) => s.range);
    expect(ranges).toEqual(["bytes=0-7", "bytes=1-1", "bytes=123-578", `bytes=${file.length - 10}-${file.length - 1}`, `bytes=${file.length - 3}-${file.length - 1}`]);
  });

  test("a read at the end returns no bytes without asking the server", async () => {
    const src = await httpSource(`${base}/file`, { size: file.length });
    const before = seen.length;
    expect((await src.read(file.length, 10)).byteLength).toBe(0);
    expect(seen.length).toBe(before);
  });

  test("decodes a plane over HTTP to the values that were written", async () => {
    const src = await httpSource(`${base}/file`);
    const plane = await decodePlane(src, ifdOffsets[2]);
    expect(plane.data).toEqual(planes[2]);
  });

  test("aborting mid-body rejects with AbortError and the server sees the socket closed", async () => {
    heldClosed = new Promise<void>((resolve) => (markHeldClosed = resolve));
    // Abort only once the response headers are in, so the body is being received.
    let headersIn = () => {};
    const answered = new Promise<void>((resolve) => (headersIn = resolve));
    const watching: typeof fetch = async (input, init) => {
      const response = await fetch(input, init);
      headersIn();
      return response;
    };
    const src = await httpSource(`${base}/held`, { size: file.length, fetch: watching });
    const controller = new AbortController();
    const pending = src.read(0, 1000, controller.signal);
    await answered;
    controller.abort();
    await expect(pending).rejects.toMatchObject({ name: "AbortError" });
    await expect(Promise.race([heldClosed.then(() => "closed"), new Promise((r) => setTimeout(() => r("still open"), 2000))])).resolves.toBe("closed");
  });

  test("an already aborted signal rejects before any request", async () => {
    const src = await httpSource(`${base}/file`, { size: file.length });
    const before = seen.length;
    await expect(src.read(0, 8, AbortSignal.abort())).rejects.toMatchObject({ name: "AbortError" });
    expect(seen.length).toBe(before);
  });

  test("a server that ignores Range and answers 200 is an error, not silently the whole file", async () => {
    const src = await httpSource(`${base}/whole`, { size: file.length });
    await expect(src.read(10, 20)).rejects.toThrow(/answered 200 .*does not support range requests/);
    await expect(httpSource(`${base}/whole`)).rejects.toMatchObject({ name: "HttpSourceError", status: 200 });
  });

  test("404 and 416 are errors that say what happened", async () => {
    await expect(httpSource(`${base}/missing`)).rejects.toThrow(/answered 404 \(not found\)/);
    // Claiming a larger size than the file makes the server answer 416 for a read past its end.
    const src = await httpSource(`${base}/file`, { size: file.length + 100 });
    await expect(src.read(file.length + 10, 5)).rejects.toThrow(new RegExp(`out of range; the file is ${file.length} bytes`));
  });

  test("a 206 for a different range than asked is an error", async () => {
    const src = await httpSource(`${base}/lying`, { size: file.length });
    await expect(src.read(100, 4)).rejects.toThrow(/answered bytes 0–3 when asked for 100–103/);
  });

  test("follows a redirect to a presigned URL, then reads that URL directly", async () => {
    const src = await httpSource(`${base}/redirect`);
    expect(src.size).toBe(file.length);
    const start = seen.length;
    expect(new Uint8Array(await src.read(200, 300))).toEqual(file.slice(200, 500));
    expect(seen.slice(start).map((s) => s.path)).toEqual(["/presigned"]);
    expect(seen[seen.length - 1].range).toBe("bytes=200-499");
  });

  test("when the remembered presigned URL expires, asks the original URL again", async () => {
    const src = await httpSource(`${base}/redirect-expiring`);
    const start = seen.length;
    expect(new Uint8Array(await src.read(50, 60))).toEqual(file.slice(50, 110));
    expect(seen.slice(start).map((s) => s.path)).toEqual(["/expiring", "/redirect-expiring", "/expiring"]);
  });
});

describe("parseContentRange", () => {
  test("reads start, end and total, and refuses an end past the total", () => {
    expect(parseContentRange("bytes 0-99/1000")).toEqual({ start: 0, end: 99, total: 1000 });
    expect(parseContentRange("bytes 5-9/*")).toEqual({ start: 5, end: 9, total: null });
    expect(parseContentRange("bytes 0-1000/1000")).toBeNull();
    expect(parseContentRange("bytes */1000")).toBeNull();
    expect(parseContentRange(null)).toBeNull();
  });
});
