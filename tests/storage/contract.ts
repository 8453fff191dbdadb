// The behaviour every BlobStore driver must share; each driver's test file runs it against a real
// backend (a temp folder, a loopback s3rver). Not a *.test.ts file, so vitest only runs it through them.
import { createHash, randomBytes, randomUUID } from "node:crypto";
import { Readable } from "node:stream";
import { describe, expect, test } from "vitest";
import {
  InvalidKeyError,
  ObjectExistsError,
  ObjectNotFoundError,
  RangeNotSatisfiableError,
  type BlobStore,
} from "@/lib/server/storage";

const MiB = 1024 * 1024;

export const sha256Hex = (bytes: Buffer) => createHash("sha256").update(bytes).digest("hex");

export async function readAll(stream: NodeJS.ReadableStream): Promise<Buffer> {
  const chunks: Buffer[] = [];
  for await (const chunk of stream as AsyncIterable<Buffer>) chunks.push(Buffer.from(chunk));
  return Buffer.concat(chunks);
}

/** Streams `bytes` in 64 KiB chunks, as an upload from the network would arrive. */
export function chunked(bytes: Buffer): Readable {
  let offset = 0;
  return new Readable({
    read() {
      const end = Math.min(offset + 64 * 1024, bytes.length);
      this.push(end > offset ? bytes.subarray(offset, end) : null);
      offset = end;
    },
  });
}

/**
 * A body that delivers `first`, then stalls until release(); `stalled` resolves once the store has
 * pulled all of `first`, i.e. the put is provably mid-stream.
 */
export function stallingBody(first: Buffer, rest: Buffer) {
  let sentFirst = false;
  let released = false;
  let waitingRead = false;
  let markStalled!: () => void;
  const stalled = new Promise<void>((resolve) => (markStalled = resolve));
  const finish = (stream: Readable) => {
    stream.push(rest);
    stream.push(null);
  };
  const stream = new Readable({
    read() {
      if (!sentFirst) {
        sentFirst = true;
        this.push(first);
      } else if (released) {
        finish(this);
      } else {
        waitingRead = true;
        markStalled();
      }
    },
  });
  return {
    stream,
    stalled,
    release() {
      released = true;
      if (waitingRead) finish(stream);
    },
  };
}

export interface ContractOptions {
  /** Bytes per multipart part for drivers that have parts; the round trip crosses it twice. */
  partSize: number;
}

export function describeBlobStoreContract(name: string, getStore: () => BlobStore, options: ContractOptions) {
  // Every test writes under its own prefix, so tests never see each other's objects.
  const fresh = () => `t-${randomUUID()}/`;

  describe(`${name}: BlobStore contract`, { timeout: 60_000 }, () => {
    test("round-trips several MiB of random bytes across part boundaries, reporting node:crypto's SHA-256", async () => {
      const store = getStore();
      const bytes = randomBytes(2 * options.partSize + 12_345);
      const key = `${fresh()}stack.ome.tif`;

      const written = await store.put(key, chunked(bytes), { contentType: "image/tiff" });

      expect(written).toEqual({ size: bytes.length, sha256: sha256Hex(bytes) });
      expect(Buffer.compare(await readAll(await store.get(key)), bytes)).toBe(0);
      expect(await store.sha256(key)).toBe(sha256Hex(bytes));
      const info = await store.stat(key);
      expect(info?.size).toBe(bytes.length);
      expect(info?.etag).toMatch(/\S/);
      expect(info?.modified).toBeInstanceOf(Date);
    });

    test("accepts a Buffer or Uint8Array body, including an empty one", async () => {
      const store = getStore();
      const prefix = fresh();
      const bytes = randomBytes(1000);
      const view = new Uint8Array(bytes.buffer, bytes.byteOffset + 10, 500);

      expect(await store.put(`${prefix}buffer`, bytes)).toEqual({ size: 1000, sha256: sha256Hex(bytes) });
      expect(await store.put(`${prefix}view`, view)).toEqual({ size: 500, sha256: sha256Hex(Buffer.from(view)) });
      expect(await store.put(`${prefix}empty`, Buffer.alloc(0))).toEqual({ size: 0, sha256: sha256Hex(Buffer.alloc(0)) });

      expect(Buffer.compare(await readAll(await store.get(`${prefix}view`)), Buffer.from(view))).toBe(0);
      expect((await readAll(await store.get(`${prefix}empty`))).length).toBe(0);
      expect((await store.stat(`${prefix}empty`))?.size).toBe(0);
    });

    test("refuses a second put to the same key and keeps the first bytes", async () => {
      const store = getStore();
      const key = `${fresh()}raw.tif`;
      const first = randomBytes(4096);
      await store.put(key, first);

      await expect(store.put(key, randomBytes(4096))).rejects.toBeInstanceOf(ObjectExistsError);
      await expect(store.put(key, chunked(randomBytes(100_000)))).rejects.toBeInstanceOf(ObjectExistsError);

      expect(Buffer.compare(await readAll(await store.get(key)), first)).toBe(0);
    });

    describe("byte ranges", () => {
      const bytes = randomBytes(100_003);
      const last = bytes.length - 1;
      let key = "";
      const ready = async (store: BlobStore) => {
        if (!key) {
          key = `${fresh()}ranged.tif`;
          await store.put(key, bytes);
        }
        return key;
      };

      test.each([
        ["the first byte", 0, 0],
        ["the last byte", last, last],
        ["a middle span", 4096, 70_000],
        ["a single middle byte", 5000, 5000],
        ["the first 8 bytes (a TIFF header)", 0, 7],
        ["everything, as a range", 0, last],
      ])("serves %s as inclusive [start, end]", async (_label, start, end) => {
        const store = getStore();
        const got = await readAll(await store.get(await ready(store), { start, end }));
        expect(Buffer.compare(got, bytes.subarray(start, end + 1))).toBe(0);
      });

      test.each([
        ["start after end", 10, 9],
        ["end one past the last byte", 0, last + 1],
        ["start at the size", last + 1, last + 1],
        ["start far beyond the size", 10 * MiB, 10 * MiB + 5],
        ["a negative start", -1, 5],
        ["a fractional offset", 0.5, 9],
      ])("rejects %s with RangeNotSatisfiableError", async (_label, start, end) => {
        const store = getStore();
        await expect(store.get(await ready(store), { start, end })).rejects.toBeInstanceOf(RangeNotSatisfiableError);
      });
    });

    test("reports a missing key as ObjectNotFoundError on get and sha256, and null on stat", async () => {
      const store = getStore();
      const key = `${fresh()}absent.tif`;
      await expect(store.get(key)).rejects.toBeInstanceOf(ObjectNotFoundError);
      await expect(store.get(key, { start: 0, end: 0 })).rejects.toBeInstanceOf(ObjectNotFoundError);
      await expect(store.sha256(key)).rejects.toBeInstanceOf(ObjectNotFoundError);
      expect(await store.stat(key)).toBeNull();
    });

    test("lists keys that start with the prefix, sorted, including deeper ones", async () => {
      const store = getStore();
      const prefix = fresh();
      for (const key of ["b/2", "a", "b/1", "bc", "c/d/e"]) await store.put(`${prefix}${key}`, Buffer.from(key));

      expect(await store.list(prefix)).toEqual(["a", "b/1", "b/2", "bc", "c/d/e"].map((k) => prefix + k));
      expect(await store.list(`${prefix}b`)).toEqual(["b/1", "b/2", "bc"].map((k) => prefix + k));
      expect(await store.list(`${prefix}b/`)).toEqual([`${prefix}b/1`, `${prefix}b/2`]);
      expect(await store.list(`${prefix}zzz/`)).toEqual([]);
    });

    test("deletes one object, and deleting it again or a never-stored key is not an error", async () => {
      const store = getStore();
      const prefix = fresh();
      await store.put(`${prefix}keep`, Buffer.from("keep"));
      await store.put(`${prefix}drop`, Buffer.from("drop"));

      await store.delete(`${prefix}drop`);
      await store.delete(`${prefix}drop`);
      await store.delete(`${prefix}never/stored`);

      expect(await store.stat(`${prefix}drop`)).toBeNull();
      expect(await store.list(prefix)).toEqual([`${prefix}keep`]);
      // Write-once applies to live keys only: a deleted key can be written again.
      await store.put(`${prefix}drop`, Buffer.from("again"));
      expect((await readAll(await store.get(`${prefix}drop`))).toString()).toBe("again");
    });

    test("deletePrefix removes only the objects under the prefix and returns how many", async () => {
      const store = getStore();
      const prefix = fresh();
      const staged = ["uploads/u1/part-1", "uploads/u1/part-2", "uploads/u1/deep/part-3"];
      for (const key of [...staged, "uploads/u10/part-1", "datasets/d1/raw.tif"]) {
        await store.put(`${prefix}${key}`, randomBytes(64));
      }

      expect(await store.deletePrefix(`${prefix}uploads/u1/`)).toBe(3);

      expect(await store.list(prefix)).toEqual([`${prefix}datasets/d1/raw.tif`, `${prefix}uploads/u10/part-1`]);
      expect(await store.deletePrefix(`${prefix}uploads/u1/`)).toBe(0);
      // Objects under a cleared folder can be staged again.
      await store.put(`${prefix}uploads/u1/part-1`, Buffer.from("again"));
      expect(await store.list(`${prefix}uploads/u1/`)).toEqual([`${prefix}uploads/u1/part-1`]);
    });

    test("refuses deletePrefix with an empty prefix, which would empty the whole store", async () => {
      const store = getStore();
      const key = `${fresh()}survivor`;
      await store.put(key, Buffer.from("x"));
      await expect(store.deletePrefix("")).rejects.toBeInstanceOf(InvalidKeyError);
      expect(await store.stat(key)).not.toBeNull();
    });

    test.each([
      ["empty", ""],
      ["absolute", "/etc/passwd"],
      ["parent escape", "../outside"],
      ["parent segment inside", "a/../../b"],
      ["dot segment", "a/./b"],
      ["doubled slash", "a//b"],
      ["trailing slash", "a/b/"],
      ["space", "my stack.tif"],
      ["backslash", "a\\b"],
      ["non-ASCII", "stäck.tif"],
      ["tilde", "a~b"],
      ["NUL byte", "a\0b"],
      ["too long", "k".repeat(1025)],
    ])("rejects a key that is %s on every operation", async (_label, key) => {
      const store = getStore();
      await expect(store.put(key, Buffer.from("x"))).rejects.toBeInstanceOf(InvalidKeyError);
      await expect(store.get(key)).rejects.toBeInstanceOf(InvalidKeyError);
      await expect(store.stat(key)).rejects.toBeInstanceOf(InvalidKeyError);
      await expect(store.delete(key)).rejects.toBeInstanceOf(InvalidKeyError);
      await expect(store.sha256(key)).rejects.toBeInstanceOf(InvalidKeyError);
      await expect(store.presignGet(key, 60)).rejects.toBeInstanceOf(InvalidKeyError);
    });

    test.each([["/abs/"], ["../"], ["a//"], ["a b/"]])("rejects the prefix %j for list and deletePrefix", async (prefix) => {
      const store = getStore();
      await expect(store.list(prefix)).rejects.toBeInstanceOf(InvalidKeyError);
      await expect(store.deletePrefix(prefix)).rejects.toBeInstanceOf(InvalidKeyError);
    });

    test("never shows an object under its key while its put is still streaming", async () => {
      const store = getStore();
      const prefix = fresh();
      const first = randomBytes(options.partSize + MiB);
      const rest = randomBytes(MiB);
      const body = stallingBody(first, rest);

      const putting = store.put(`${prefix}slow.tif`, body.stream);
      await body.stalled;
      expect(await store.stat(`${prefix}slow.tif`)).toBeNull();
      expect(await store.list(prefix)).toEqual([]);

      body.release();
      const all = Buffer.concat([first, rest]);
      expect(await putting).toEqual({ size: all.length, sha256: sha256Hex(all) });
      expect(await store.list(prefix)).toEqual([`${prefix}slow.tif`]);
    });

    test("an aborted put rejects with AbortError and leaves no object, so the key stays writable", async () => {
      const store = getStore();
      const prefix = fresh();
      const body = stallingBody(randomBytes(options.partSize + MiB), randomBytes(MiB));
      const controller = new AbortController();

      const putting = store.put(`${prefix}aborted.tif`, body.stream, { signal: controller.signal });
      await body.stalled;
      controller.abort();

      await expect(putting).rejects.toMatchObject({ name: "AbortError" });
      expect(await store.stat(`${prefix}aborted.tif`)).toBeNull();
      expect(await store.list(prefix)).toEqual([]);
      const again = randomBytes(2048);
      expect(await store.put(`${prefix}aborted.tif`, again)).toEqual({ size: 2048, sha256: sha256Hex(again) });
    });

    test("a put whose signal is already aborted writes nothing", async () => {
      const store = getStore();
      const key = `${fresh()}never.tif`;
      await expect(store.put(key, randomBytes(10), { signal: AbortSignal.abort() })).rejects.toMatchObject({
        name: "AbortError",
      });
      expect(await store.stat(key)).toBeNull();
    });
  });
}
