import { randomUUID } from "node:crypto";
import {
  DeleteObjectCommand,
  GetObjectCommand,
  HeadBucketCommand,
  NoSuchKey,
  PutObjectCommand,
  S3Client,
  S3ServiceException,
} from "@aws-sdk/client-s3";
import { env } from "./env.server";
import { DomainError, type DomainErrorOptions } from "./failure.server";

/**
 * Where kept files live (uploaded documents, their thumbnails, consult letters): an S3-compatible
 * object store, so any number of app servers and workers see the same files and none keeps any
 * on its own disk. Locally the store is the `s3rver` stand-in (app/standins/s3-server.ts).
 *
 * Keys are namespaced by practice: `<practice>/<area>/<uuid>.<ext>`. A store only reads, writes
 * and deletes keys under its own practice, so a key copied from another practice's rows is
 * refused even when the bucket is shared.
 */
export interface FileStorage {
  /** Stores the bytes under a new key and returns the key. Throws StorageUnavailableError when the store cannot be reached. */
  put(bytes: Uint8Array, opts: { prefix: string; extension: string; contentType?: string }): Promise<string>;
  /** The bytes stored under `key`, or null. */
  get(key: string): Promise<Buffer | null>;
  /** The stored object as a stream (for downloads through the app), or null. */
  stream(key: string): Promise<{ body: ReadableStream<Uint8Array>; size: number | null } | null>;
  delete(key: string): Promise<void>;
}

/** The key is malformed or belongs to another practice; answered 403. */
export class StorageKeyError extends DomainError {
  constructor(message: string, options: DomainErrorOptions = {}) {
    super(message, { status: 403, ...options });
  }
}

/** The object store could not be reached or refused the request; nothing was stored. Answered 503. */
export class StorageUnavailableError extends DomainError {
  constructor(message = "File storage is not reachable at the moment.", options: DomainErrorOptions = {}) {
    super(message, { status: 503, ...options });
  }
}

const SEGMENT = /^[a-z0-9][a-z0-9-]{0,62}$/;
const KEY = /^([a-z0-9][a-z0-9-]{0,62})\/([a-z0-9][a-z0-9-]{0,62})\/[0-9a-f-]{36}\.[a-z0-9]{2,5}$/;

export type S3StorageConfig = {
  /** Unset: the provider's default endpoint for the region (AWS). */
  endpoint?: string;
  region: string;
  bucket: string;
  accessKeyId?: string;
  secretAccessKey?: string;
  /** Path-style URLs (http://host/bucket/key): the stand-in and most S3-compatible stores. */
  forcePathStyle: boolean;
  /** The practice's namespace in the bucket. */
  practice: string;
};

export class S3Storage implements FileStorage {
  readonly client: S3Client;

  constructor(readonly config: S3StorageConfig) {
    if (!SEGMENT.test(config.practice))
      throw new Error(
        `Invalid practice namespace ${JSON.stringify(config.practice)}: lower-case letters, digits and dashes`,
      );
    this.client = new S3Client({
      endpoint: config.endpoint,
      region: config.region,
      forcePathStyle: config.forcePathStyle,
      credentials:
        config.accessKeyId && config.secretAccessKey
          ? { accessKeyId: config.accessKeyId, secretAccessKey: config.secretAccessKey }
          : undefined,
      // A store that is down should answer an upload quickly with an error, not hang it.
      maxAttempts: 2,
      requestHandler: { connectionTimeout: 3_000, requestTimeout: 30_000 },
    });
  }

  /** Refuses a malformed key or one outside this practice's namespace. */
  checkKey(key: string) {
    const m = KEY.exec(key);
    if (!m) throw new StorageKeyError(`Invalid storage key ${JSON.stringify(key)}.`);
    if (m[1] !== this.config.practice)
      throw new StorageKeyError("This file belongs to another practice's storage and cannot be opened here.");
    return key;
  }

  async put(bytes: Uint8Array, opts: { prefix: string; extension: string; contentType?: string }) {
    if (!SEGMENT.test(opts.prefix) || !/^[a-z0-9]{2,5}$/.test(opts.extension))
      throw new StorageKeyError(`Invalid storage prefix or extension.`);
    const key = `${this.config.practice}/${opts.prefix}/${randomUUID()}.${opts.extension}`;
    try {
      await this.client.send(
        new PutObjectCommand({
          Bucket: this.config.bucket,
          Key: key,
          Body: bytes,
          ContentType: opts.contentType ?? "application/octet-stream",
        }),
      );
    } catch (e) {
      throw new StorageUnavailableError(undefined, { cause: e });
    }
    return key;
  }

  private async getObject(key: string) {
    this.checkKey(key);
    try {
      return await this.client.send(new GetObjectCommand({ Bucket: this.config.bucket, Key: key }));
    } catch (e) {
      if (e instanceof NoSuchKey || (e instanceof S3ServiceException && e.$metadata.httpStatusCode === 404))
        return null;
      throw new StorageUnavailableError(undefined, { cause: e });
    }
  }

  async get(key: string) {
    const out = await this.getObject(key);
    if (!out?.Body) return null;
    return Buffer.from(await out.Body.transformToByteArray());
  }

  async stream(key: string) {
    const out = await this.getObject(key);
    if (!out?.Body) return null;
    return { body: out.Body.transformToWebStream() as ReadableStream<Uint8Array>, size: out.ContentLength ?? null };
  }

  async delete(key: string) {
    this.checkKey(key);
    try {
      await this.client.send(new DeleteObjectCommand({ Bucket: this.config.bucket, Key: key }));
    } catch (e) {
      throw new StorageUnavailableError(undefined, { cause: e });
    }
  }

  /** True when the bucket answers (health checks). */
  async reachable() {
    try {
      await this.client.send(new HeadBucketCommand({ Bucket: this.config.bucket }));
      return true;
    } catch {
      return false;
    }
  }
}

/** The store the environment describes (S3_* settings, see env.server.ts). */
export function storageFromEnv(): S3Storage {
  return new S3Storage({
    endpoint: env.S3_ENDPOINT,
    region: env.S3_REGION,
    bucket: env.S3_BUCKET,
    accessKeyId: env.S3_ACCESS_KEY_ID,
    secretAccessKey: env.S3_SECRET_ACCESS_KEY,
    forcePathStyle: env.S3_FORCE_PATH_STYLE,
    practice: env.DIOPTRA_PRACTICE_ID,
  });
}

let current: FileStorage = storageFromEnv();

/** The app's file store. A live binding: tests may swap it with `useStorage`. */
export { current as storage };

/** Replaces the file store of this process (tests point it at a stand-in they stop and start). */
export function useStorage(next: FileStorage) {
  current = next;
}
