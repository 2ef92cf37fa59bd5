import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { eq } from "drizzle-orm";
import S3rver from "s3rver";
import sharp from "sharp";
import { afterAll, afterEach, describe, expect, it } from "vitest";
import { documents } from "~/db/schema";
import { action as uploadAction } from "~/routes/api/uploads";
import { loader as fileLoader } from "~/routes/patients/document-file";
import { db } from "~/utils/db.server";
import { loadEnv } from "~/utils/env.server";
import { S3Storage, storage, StorageKeyError, StorageUnavailableError, useStorage } from "~/utils/storage.server";
import { UNIT } from "#tests/support/ports";
import { newPatient } from "#tests/support/factories";
import { BASE, cookieFor, dataOf, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";

const uniq = () => Math.random().toString(36).slice(2, 8);
const defaultStorage = storage;

const patient = () => newPatient({ firstName: "Storage", dateOfBirth: "1971-03-03", email: null });

function uploadRequest(cookie: string, patientId: string, file: { bytes: Uint8Array; name: string; type: string }) {
  const form = new FormData();
  form.set("patientId", patientId);
  form.set("kind", "fundus_photo");
  form.set("file", new File([new Uint8Array(file.bytes)], file.name, { type: file.type }));
  return new Request(`${BASE}/api/uploads`, { method: "POST", headers: { cookie }, body: form });
}

const standInConfig = (port: number, practice = "practice") => ({
  endpoint: `http://127.0.0.1:${port}`,
  region: "us-east-1",
  bucket: "dioptra-files",
  accessKeyId: "S3RVER",
  secretAccessKey: "S3RVER",
  forcePathStyle: true,
  practice,
});

afterEach(() => useStorage(defaultStorage));

describe("object storage", () => {
  it("stores, reads, streams and deletes through the S3 API, with keys under the practice", async () => {
    const bytes = new TextEncoder().encode(`%PDF-1.4 object ${uniq()}`);
    const key = await storage.put(bytes, { prefix: "documents", extension: "pdf", contentType: "application/pdf" });
    expect(key).toMatch(/^practice\/documents\/[0-9a-f-]{36}\.pdf$/);
    expect((await storage.get(key))!.equals(Buffer.from(bytes))).toBe(true);
    const streamed = await storage.stream(key);
    expect(streamed!.size).toBe(bytes.length);
    expect(Buffer.from(await new Response(streamed!.body).arrayBuffer()).equals(Buffer.from(bytes))).toBe(true);
    await storage.delete(key);
    expect(await storage.get(key)).toBeNull();
  });

  it("refuses a key from another practice's path, in the store and in the download route", async () => {
    const other = new S3Storage(standInConfig(UNIT.s3, "other-practice"));
    const foreignKey = await other.put(new TextEncoder().encode("%PDF-1.4 theirs"), {
      prefix: "documents",
      extension: "pdf",
    });
    expect(foreignKey.startsWith("other-practice/")).toBe(true);
    await expect(storage.get(foreignKey)).rejects.toBeInstanceOf(StorageKeyError);
    await expect(storage.delete(foreignKey)).rejects.toThrow(/another practice/);
    await expect(storage.get("../practice/documents/x.pdf")).rejects.toBeInstanceOf(StorageKeyError);
    // A row that points at another practice's object answers 403 with the reason, and the object survives.
    const p = await patient();
    const owner = await userByEmail("owner@dioptra-demo.test");
    const [doc] = await db
      .insert(documents)
      .values({
        patientId: p.id,
        kind: "other",
        originalName: "theirs.pdf",
        contentType: "application/pdf",
        sizeBytes: 15,
        storageKey: foreignKey,
        uploadedById: owner.id,
      })
      .returning();
    const res = await run(fileLoader, makeRequest("/x", { cookie: await cookieFor("owner") }), {
      patientId: p.id,
      documentId: doc!.id,
      variant: "file",
    });
    expect(statusOf(res)).toBe(403);
    expect(dataOf<{ error: string }>(res).error).toMatch(/another practice/);
    expect(await other.get(foreignKey)).not.toBeNull();
  });

  describe("an upload while storage is down", () => {
    const dir = mkdtempSync(join(tmpdir(), "dioptra-s3-"));
    let server: S3rver | null = null;
    const startStore = async () => {
      server = new S3rver({
        port: UNIT.s3Spare,
        address: "127.0.0.1",
        directory: dir,
        silent: true,
        configureBuckets: [{ name: "dioptra-files", configs: [] }],
      });
      await server.run();
    };
    const stopStore = async () => {
      await server?.close();
      server = null;
    };
    afterAll(async () => {
      await stopStore();
      rmSync(dir, { recursive: true, force: true });
    });

    it("answers 503 with a clear message, saves no row and no object, and the retry works", async () => {
      useStorage(new S3Storage(standInConfig(UNIT.s3Spare)));
      const p = await patient();
      const cookie = await cookieFor("optometrist");
      const bytes = await sharp({
        create: { width: 400, height: 300, channels: 3, background: { r: 20, g: 90, b: 160 } },
      })
        .png()
        .toBuffer();

      const down = (await run(
        uploadAction,
        uploadRequest(cookie, p.id, { bytes, name: "fundus.png", type: "image/png" }),
      )) as Response;
      expect(down.status).toBe(503);
      const body = (await down.json()) as { ok: boolean; message: string; field: string };
      expect(body).toMatchObject({ ok: false, field: "file" });
      expect(body.message).toMatch(/not reachable.*Nothing was saved.*try the upload again/);
      expect(await db.select().from(documents).where(eq(documents.patientId, p.id))).toHaveLength(0);

      await startStore();
      const retry = (await run(
        uploadAction,
        uploadRequest(cookie, p.id, { bytes, name: "fundus.png", type: "image/png" }),
      )) as Response;
      expect(retry.status).toBe(201);
      const rows = await db.select().from(documents).where(eq(documents.patientId, p.id));
      expect(rows).toHaveLength(1);
      const file = (await run(fileLoader, makeRequest("/x", { cookie }), {
        patientId: p.id,
        documentId: rows[0]!.id,
        variant: "file",
      })) as Response;
      expect(Buffer.from(await file.arrayBuffer()).equals(bytes)).toBe(true);

      // Reading while the store is down: 503 with a message, not a crash or a "missing file".
      await stopStore();
      const unreadable = await run(fileLoader, makeRequest("/x", { cookie }), {
        patientId: p.id,
        documentId: rows[0]!.id,
        variant: "file",
      });
      expect(statusOf(unreadable)).toBe(503);
      await expect(storage.get(rows[0]!.storageKey)).rejects.toBeInstanceOf(StorageUnavailableError);
    });
  });

  it("checks the object-storage settings: production must name its store; keys come in pairs", () => {
    const base = { DATABASE_URL: "postgres://u:p@127.0.0.1:5432/d", SESSION_SECRET: "a-long-enough-secret-value" };
    expect(() => loadEnv({ ...base, NODE_ENV: "production" })).toThrow(/S3_REGION.*S3_BUCKET|S3_BUCKET/);
    const prod = loadEnv({
      ...base,
      NODE_ENV: "production",
      S3_BUCKET: "clinic-files",
      S3_REGION: "eu-west-2",
      DIOPTRA_PRACTICE_ID: "north-clinic",
    });
    expect(prod).toMatchObject({
      S3_BUCKET: "clinic-files",
      S3_REGION: "eu-west-2",
      S3_FORCE_PATH_STYLE: false,
      DIOPTRA_PRACTICE_ID: "north-clinic",
    });
    expect(prod.S3_ENDPOINT).toBeUndefined(); // AWS: the SDK's endpoint for the region
    expect(() =>
      loadEnv({
        ...base,
        NODE_ENV: "production",
        S3_BUCKET: "clinic-files",
        S3_REGION: "eu-west-2",
        S3_ACCESS_KEY_ID: "AKIAEXAMPLE",
      }),
    ).toThrow(/S3_SECRET_ACCESS_KEY: set both/);
    expect(() => loadEnv({ ...base, NODE_ENV: "production", S3_BUCKET: "Bad_Bucket", S3_REGION: "eu-west-2" })).toThrow(
      /S3_BUCKET/,
    );
    expect(() => loadEnv({ ...base, DIOPTRA_PRACTICE_ID: "../escape" })).toThrow(/DIOPTRA_PRACTICE_ID/);
    // Development: the local stand-in and its default keys.
    expect(loadEnv({ ...base })).toMatchObject({
      S3_ENDPOINT: "http://127.0.0.1:4569",
      S3_BUCKET: "dioptra-files",
      S3_FORCE_PATH_STYLE: true,
    });
  });
});
