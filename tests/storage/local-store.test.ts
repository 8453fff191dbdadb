import { randomBytes } from "node:crypto";
import { mkdtempSync, rmSync } from "node:fs";
import { mkdir, readdir, stat, writeFile } from "node:fs/promises";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { createLocalStore, InvalidKeyError, ObjectExistsError, type BlobStore } from "@/lib/server/storage";
import { describeBlobStoreContract, readAll, sha256Hex, stallingBody } from "./contract";

let dir = "";
let store: BlobStore;

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), "fluxframe-blobs-"));
  store = createLocalStore(dir);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describeBlobStoreContract("local", () => store, { partSize: 5 * 1024 * 1024 });

/** Every file under `folder`, relative, temp files included. */
async function filesUnder(folder: string): Promise<string[]> {
  const entries = await readdir(folder, { recursive: true, withFileTypes: true }).catch(() => []);
  return entries.filter((e) => e.isFile()).map((e) => join(e.parentPath, e.name).slice(folder.length + 1));
}

describe("local driver", () => {
  test("stores each object as a read-only (0444) file at its key's path", async () => {
    await store.put("ro/a/raw.tif", randomBytes(100));
    const info = await stat(join(dir, "ro/a/raw.tif"));
    expect(info.mode & 0o777).toBe(0o444);
  });

  test("reports presignGet as null, since the app streams local objects itself", async () => {
    await store.put("presign/raw.tif", randomBytes(10));
    expect(await store.presignGet("presign/raw.tif", 60)).toBeNull();
  });

  test("ignores a temp file left by a crashed put: not listed, and a later put of the key succeeds", async () => {
    // A crash between writing and link() leaves exactly this kind of file beside the target.
    await mkdir(join(dir, "crash"), { recursive: true });
    await writeFile(join(dir, "crash", ".0b8f6c1e-half~tmp"), randomBytes(1000));

    expect(await store.list("crash/")).toEqual([]);
    const bytes = randomBytes(3000);
    expect(await store.put("crash/raw.tif", bytes)).toEqual({ size: 3000, sha256: sha256Hex(bytes) });
    expect(await store.list("crash/")).toEqual(["crash/raw.tif"]);
  });

  test("deletePrefix also clears leftover temp files and removes the emptied folders", async () => {
    await store.put("staging/u7/part-1", randomBytes(10));
    await writeFile(join(dir, "staging/u7", ".dead~tmp"), randomBytes(10));

    expect(await store.deletePrefix("staging/u7/")).toBe(1);
    expect(await filesUnder(join(dir, "staging"))).toEqual([]);
    await expect(stat(join(dir, "staging/u7"))).rejects.toMatchObject({ code: "ENOENT" });
  });

  test("an aborted put leaves no temp file behind", async () => {
    const body = stallingBody(randomBytes(2 * 1024 * 1024), randomBytes(1024));
    const controller = new AbortController();
    const putting = store.put("aborted/raw.tif", body.stream, { signal: controller.signal });
    await body.stalled;
    // Mid-stream, the bytes so far exist only as a temp file.
    expect((await filesUnder(join(dir, "aborted"))).every((name) => name.includes("~"))).toBe(true);
    expect(await filesUnder(join(dir, "aborted"))).toHaveLength(1);

    controller.abort();
    await expect(putting).rejects.toMatchObject({ name: "AbortError" });
    expect(await filesUnder(join(dir, "aborted"))).toEqual([]);
  });

  test("two concurrent puts of one key: exactly one wins and the object holds the winner's bytes", async () => {
    const a = randomBytes(200_000);
    const b = randomBytes(200_000);
    const results = await Promise.allSettled([store.put("race/raw.tif", a), store.put("race/raw.tif", b)]);

    const won = results.filter((r) => r.status === "fulfilled");
    const lost = results.filter((r) => r.status === "rejected");
    expect(won).toHaveLength(1);
    expect(lost).toHaveLength(1);
    expect((lost[0] as PromiseRejectedResult).reason).toBeInstanceOf(ObjectExistsError);
    const stored = await readAll(await store.get("race/raw.tif"));
    const winner = (won[0] as PromiseFulfilledResult<{ sha256: string }>).value.sha256;
    expect(sha256Hex(stored)).toBe(winner);
  });

  test("refuses a key whose parent is already an object, and a key that is a folder of objects", async () => {
    await store.put("nest/file", Buffer.from("x"));
    await expect(store.put("nest/file/child", Buffer.from("y"))).rejects.toBeInstanceOf(InvalidKeyError);
    await expect(store.put("nest", Buffer.from("z"))).rejects.toBeInstanceOf(InvalidKeyError);
    expect(await store.list("nest")).toEqual(["nest/file"]);
  });

  test("keeps every object inside its folder: nothing is written outside the store", async () => {
    const outside = join(dir, "..", "escaped-by-test");
    await expect(store.put("../escaped-by-test", Buffer.from("x"))).rejects.toBeInstanceOf(InvalidKeyError);
    await expect(stat(outside)).rejects.toMatchObject({ code: "ENOENT" });
  });
});
