import "server-only";
import { randomUUID } from "node:crypto";
import { chmod, link, lstat, mkdir, open, readdir, rmdir, stat, unlink, type FileHandle } from "node:fs/promises";
import { dirname, join, relative, resolve, sep } from "node:path";
import { Transform } from "node:stream";
import { pipeline } from "node:stream/promises";
import { abortError, hashingPassThrough, sha256OfStream, toReadable, type BlobStore } from "./blob-store";
import { InvalidKeyError, ObjectExistsError, ObjectNotFoundError } from "./errors";
import { assertValidKey, assertValidPrefix, assertValidRange } from "./keys";

// Temp files carry a "~", which no key may contain, so list() and put() can never mistake one for
// an object. A crash mid-write leaves only such a file behind.
const TEMP_MARK = "~";
const isTempName = (name: string) => name.includes(TEMP_MARK);

function errno(error: unknown): string | undefined {
  return (error as NodeJS.ErrnoException | undefined)?.code;
}

/**
 * Objects are files under `dir`, one per key. A put writes a temp file beside its target, then
 * link()s it into place: link fails if the name exists, so the exclusive check and the publish are one
 * atomic step and a partial object is never visible under its key.
 */
export function createLocalStore(dir: string, options: { faultAfterBytes?: number } = {}): BlobStore {
  const root = resolve(dir);
  let written = 0;

  /**
   * Testing aid (STORAGE_FAULT_AFTER_BYTES): behaves like a disk that fills up once this store has
   * written that many bytes in this process: the write fails with ENOSPC, as fs would.
   */
  function diskFullAfterLimit(): Transform {
    const limit = options.faultAfterBytes;
    return new Transform({
      transform(chunk: Buffer, _encoding, callback) {
        if (limit !== undefined && written + chunk.length > limit) {
          const error = Object.assign(new Error("ENOSPC: no space left on device, write"), { code: "ENOSPC", errno: -28, syscall: "write" });
          callback(error);
          return;
        }
        written += chunk.length;
        callback(null, chunk);
      },
    });
  }

  function pathOf(key: string): string {
    assertValidKey(key);
    const path = resolve(root, key);
    // The key pattern already rules out escapes; this is a second, independent guard.
    if (!path.startsWith(root + sep)) throw new InvalidKeyError(key, "resolves outside the store");
    return path;
  }

  async function existingKind(path: string): Promise<"file" | "dir" | null> {
    try {
      const info = await lstat(path);
      return info.isDirectory() ? "dir" : "file";
    } catch (error) {
      if (errno(error) === "ENOENT" || errno(error) === "ENOTDIR") return null;
      throw error;
    }
  }

  async function makeParent(key: string, path: string): Promise<void> {
    try {
      await mkdir(dirname(path), { recursive: true });
    } catch (error) {
      // "a/b" cannot be stored while "a" is an object: a file cannot also be a folder.
      if (errno(error) === "ENOTDIR" || errno(error) === "EEXIST") {
        throw new InvalidKeyError(key, "a parent segment is already an object in the local store");
      }
      throw error;
    }
  }

  /** Opens the temp file exclusively; a concurrent prune may remove the folder just made, so retry once. */
  async function createTemp(key: string, path: string, temp: string): Promise<FileHandle> {
    for (let attempt = 0; ; attempt++) {
      await makeParent(key, path);
      try {
        return await open(temp, "wx", 0o600);
      } catch (error) {
        if (errno(error) !== "ENOENT" || attempt > 0) throw error;
      }
    }
  }

  async function removeQuietly(path: string): Promise<void> {
    await unlink(path).catch((error) => {
      if (errno(error) !== "ENOENT" && errno(error) !== "ENOTDIR") throw error;
    });
  }

  async function fsync(path: string): Promise<void> {
    const handle = await open(path, "r");
    try {
      await handle.sync();
    } finally {
      await handle.close();
    }
  }

  /** Every file under the folder implied by `prefix`, as keys starting with `prefix` (temp files too, if asked). */
  async function walk(prefix: string, includeTemp: boolean): Promise<string[]> {
    const base = join(root, prefix.slice(0, prefix.lastIndexOf("/") + 1));
    const found: string[] = [];
    async function visit(folder: string): Promise<void> {
      let entries;
      try {
        entries = await readdir(folder, { withFileTypes: true });
      } catch (error) {
        if (errno(error) === "ENOENT" || errno(error) === "ENOTDIR") return;
        throw error;
      }
      for (const entry of entries) {
        const full = join(folder, entry.name);
        const key = relative(root, full).split(sep).join("/");
        if (entry.isDirectory()) {
          if ((key + "/").startsWith(prefix) || prefix.startsWith(key + "/")) await visit(full);
        } else if (entry.isFile() && key.startsWith(prefix) && (includeTemp || !isTempName(entry.name))) {
          found.push(key);
        }
      }
    }
    await visit(base);
    return found.sort();
  }

  /** Removes empty folders from `folder` up to (not including) the root; stops at the first non-empty one. */
  async function pruneEmptyFolders(folder: string): Promise<void> {
    while (folder.startsWith(root + sep)) {
      try {
        await rmdir(folder);
      } catch {
        return;
      }
      folder = dirname(folder);
    }
  }

  const store: BlobStore = {
    kind: "local",

    async put(key, body, options = {}) {
      const path = pathOf(key);
      const { signal } = options;
      signal?.throwIfAborted();
      // Fail before streaming gigabytes when the answer is already known; link() below is the real check.
      const kind = await existingKind(path);
      if (kind === "file") throw new ObjectExistsError(key);
      if (kind === "dir") throw new InvalidKeyError(key, "other objects are stored under this key as a folder");

      const temp = join(dirname(path), `.${randomUUID()}${TEMP_MARK}tmp`);
      const hashing = hashingPassThrough();
      try {
        const handle = await createTemp(key, path, temp);
        await pipeline(toReadable(body), hashing.stream, diskFullAfterLimit(), handle.createWriteStream(), { signal });
        await fsync(temp);
        await chmod(temp, 0o444);
        if (signal?.aborted) throw abortError(signal);
        try {
          await link(temp, path);
        } catch (error) {
          if (errno(error) === "EEXIST") throw new ObjectExistsError(key);
          throw error;
        }
        await fsync(dirname(path));
      } finally {
        await removeQuietly(temp);
      }
      return hashing.result();
    },

    async get(key, range) {
      const path = pathOf(key);
      if (range) assertValidRange(key, range);
      let handle;
      try {
        handle = await open(path, "r");
      } catch (error) {
        if (errno(error) === "ENOENT" || errno(error) === "EISDIR") throw new ObjectNotFoundError(key);
        throw error;
      }
      try {
        // The size comes from the open file, so a concurrent delete cannot change it under us.
        const info = await handle.stat();
        if (!info.isFile()) throw new ObjectNotFoundError(key);
        if (range) assertValidRange(key, range, info.size);
      } catch (error) {
        await handle.close();
        throw error;
      }
      return handle.createReadStream(range ? { start: range.start, end: range.end } : {});
    },

    async stat(key) {
      const path = pathOf(key);
      try {
        const info = await stat(path);
        if (!info.isFile()) return null;
        // Objects are never rewritten, so size + modification time identify a version.
        return {
          size: info.size,
          etag: `${info.size.toString(16)}-${Math.floor(info.mtimeMs).toString(16)}`,
          modified: info.mtime,
        };
      } catch (error) {
        if (errno(error) === "ENOENT" || errno(error) === "ENOTDIR") return null;
        throw error;
      }
    },

    async list(prefix) {
      assertValidPrefix(prefix);
      return walk(prefix, false);
    },

    async delete(key) {
      const path = pathOf(key);
      try {
        await unlink(path);
      } catch (error) {
        // Missing, or the key names a folder of other objects: either way there is no object to delete.
        if (["ENOENT", "ENOTDIR", "EISDIR"].includes(errno(error) ?? "")) return;
        throw error;
      }
      await pruneEmptyFolders(dirname(path));
    },

    async deletePrefix(prefix) {
      assertValidPrefix(prefix);
      if (prefix === "") throw new InvalidKeyError(prefix, "refusing to delete every object in the store");
      // Temp files under the prefix go too: a staging clean-up must leave nothing behind, and a put
      // racing it then fails at link() instead of publishing into a folder being cleared.
      const keys = await walk(prefix, true);
      const folders = new Set<string>();
      let objects = 0;
      for (const key of keys) {
        const path = join(root, key);
        await removeQuietly(path);
        folders.add(dirname(path));
        if (!isTempName(key)) objects++;
      }
      // Deepest folders first, so parents become empty before they are tried.
      for (const folder of [...folders].sort((a, b) => b.length - a.length)) await pruneEmptyFolders(folder);
      return objects;
    },

    async presignGet(key) {
      pathOf(key);
      return null;
    },

    async sha256(key) {
      return sha256OfStream(await store.get(key));
    },
  };
  return store;
}
