import { randomUUID } from "node:crypto";
import { mkdir, readFile, rm, writeFile } from "node:fs/promises";
import { dirname, join, resolve } from "node:path";

/**
 * Where uploaded files live. One small interface so a deployment can swap the folder for an
 * object store without touching the routes; app servers keep no files of their own.
 */
export interface FileStorage {
  /** Stores the bytes under a new key and returns the key. */
  put(bytes: Uint8Array, opts: { prefix: string; extension: string }): Promise<string>;
  /** The bytes stored under `key`, or null. */
  get(key: string): Promise<Buffer | null>;
  delete(key: string): Promise<void>;
}

const KEY = /^[a-z0-9-]+\/[0-9a-f-]{36}\.[a-z0-9]{2,5}$/;

/** Files in a folder outside public/ (default .data/uploads, or DIOPTRA_STORAGE_DIR). */
export class FolderStorage implements FileStorage {
  constructor(readonly root: string) {}

  private pathOf(key: string) {
    if (!KEY.test(key)) throw new Error(`Invalid storage key ${JSON.stringify(key)}`);
    const path = resolve(this.root, key);
    if (!path.startsWith(resolve(this.root) + "/")) throw new Error("Storage key escapes the folder");
    return path;
  }

  async put(bytes: Uint8Array, opts: { prefix: string; extension: string }) {
    const key = `${opts.prefix}/${randomUUID()}.${opts.extension}`;
    const path = this.pathOf(key);
    await mkdir(dirname(path), { recursive: true });
    await writeFile(path, bytes, { flag: "wx" });
    return key;
  }

  async get(key: string) {
    try {
      return await readFile(this.pathOf(key));
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code === "ENOENT") return null;
      throw e;
    }
  }

  async delete(key: string) {
    await rm(this.pathOf(key), { force: true });
  }
}

export const storage: FileStorage = new FolderStorage(process.env.DIOPTRA_STORAGE_DIR ?? join(process.cwd(), ".data", "uploads"));
