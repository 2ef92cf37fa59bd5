import { eq } from "drizzle-orm";
import sharp from "sharp";
import { describe, expect, it } from "vitest";
import { action as uploadAction } from "~/routes/api/uploads";
import { loader as fileLoader } from "~/routes/patients/document-file";
import { sniffType } from "~/models/patients/documents.server";
import { auditLog, documents, exams } from "~/db/schema";
import { db } from "~/utils/db.server";
import { newPatient } from "#tests/support/factories";
import { BASE, cookieFor, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";

const png = () =>
  sharp({ create: { width: 640, height: 480, channels: 3, background: { r: 180, g: 60, b: 40 } } })
    .png()
    .toBuffer();

const patient = () => newPatient({ firstName: "Upload", dateOfBirth: "1960-06-06", email: null });

function uploadRequest(
  cookie: string,
  fields: Record<string, string>,
  file?: { bytes: Uint8Array; name: string; type: string },
) {
  const form = new FormData();
  for (const [k, v] of Object.entries(fields)) form.set(k, v);
  if (file) form.set("file", new File([new Uint8Array(file.bytes)], file.name, { type: file.type }));
  return new Request(`${BASE}/api/uploads`, { method: "POST", headers: { cookie }, body: form });
}

describe("uploads", () => {
  it("stores an image with a thumbnail, attached to an exam, and serves it to clinical roles only", async () => {
    const p = await patient();
    const optom = await userByEmail("optometrist@dioptra-demo.test");
    const [exam] = await db.insert(exams).values({ patientId: p.id, optometristId: optom.id }).returning();
    const bytes = await png();
    const res = (await run(
      uploadAction,
      uploadRequest(
        await cookieFor("optometrist"),
        { patientId: p.id, examId: exam!.id, kind: "fundus_photo", description: "Right fundus" },
        { bytes, name: "fundus.png", type: "image/png" },
      ),
    )) as Response;
    expect(res.status).toBe(201);
    const { id } = (await res.json()) as { id: string };
    const [doc] = await db.select().from(documents).where(eq(documents.id, id));
    expect(doc).toMatchObject({ examId: exam!.id, contentType: "image/png", sizeBytes: bytes.length });
    expect(doc!.thumbnailKey).toBeTruthy();

    const thumb = (await run(fileLoader, makeRequest("/x", { cookie: await cookieFor("owner") }), {
      patientId: p.id,
      documentId: id,
      variant: "thumbnail",
    })) as Response;
    expect(thumb.status).toBe(200);
    const meta = await sharp(Buffer.from(await thumb.arrayBuffer())).metadata();
    expect(meta.format).toBe("jpeg");
    expect(Math.max(meta.width!, meta.height!)).toBe(320);

    const file = (await run(fileLoader, makeRequest("/x", { cookie: await cookieFor("optometrist") }), {
      patientId: p.id,
      documentId: id,
      variant: "file",
    })) as Response;
    expect(Buffer.from(await file.arrayBuffer()).equals(bytes)).toBe(true);
    expect(await db.select().from(auditLog).where(eq(auditLog.entityId, id))).toHaveLength(2); // uploaded + read

    expect(
      statusOf(
        await run(fileLoader, makeRequest("/x", { cookie: await cookieFor("receptionist") }), {
          patientId: p.id,
          documentId: id,
          variant: "file",
        }),
      ),
    ).toBe(403);
    expect(
      statusOf(
        await run(fileLoader, makeRequest("/x", { cookie: await cookieFor("patient") }), {
          patientId: p.id,
          documentId: id,
          variant: "file",
        }),
      ),
    ).toBe(404);
    const me = await userByEmail("patient@dioptra-demo.test");
    // A patient guessing a document id under their own patient id still gets nothing.
    expect(
      statusOf(
        await run(fileLoader, makeRequest("/x", { cookie: await cookieFor("patient") }), {
          patientId: me.patientId!,
          documentId: id,
          variant: "file",
        }),
      ),
    ).toBe(403);
    const other = await patient();
    expect(
      statusOf(
        await run(fileLoader, makeRequest("/x", { cookie: await cookieFor("owner") }), {
          patientId: other.id,
          documentId: id,
          variant: "file",
        }),
      ),
    ).toBe(404);
  });

  it("checks the type by content, not by name, and enforces the size limit", async () => {
    const p = await patient();
    const cookie = await cookieFor("optometrist");
    const fake = new TextEncoder().encode("<script>alert(1)</script>");
    const res = (await run(
      uploadAction,
      uploadRequest(cookie, { patientId: p.id, kind: "other" }, { bytes: fake, name: "photo.png", type: "image/png" }),
    )) as Response;
    expect(res.status).toBe(415);
    expect(((await res.json()) as { message: string }).message).toMatch(/content/);
    const big = new Uint8Array(16 * 1024 * 1024);
    big.set([0x25, 0x50, 0x44, 0x46, 0x2d]);
    expect(
      (
        (await run(
          uploadAction,
          uploadRequest(
            cookie,
            { patientId: p.id, kind: "outside_record" },
            { bytes: big, name: "big.pdf", type: "application/pdf" },
          ),
        )) as Response
      ).status,
    ).toBe(413);
    const pdf = new TextEncoder().encode("%PDF-1.4\n%tiny\n");
    const ok = (await run(
      uploadAction,
      uploadRequest(
        cookie,
        { patientId: p.id, kind: "outside_record" },
        { bytes: pdf, name: "letter.bin", type: "application/octet-stream" },
      ),
    )) as Response;
    expect(ok.status).toBe(201);
    const [doc] = await db.select().from(documents).where(eq(documents.patientId, p.id));
    expect(doc).toMatchObject({ contentType: "application/pdf", thumbnailKey: null });
    expect(
      (
        (await run(
          uploadAction,
          uploadRequest(
            cookie,
            { patientId: p.id, kind: "selfie" },
            { bytes: pdf, name: "a.pdf", type: "application/pdf" },
          ),
        )) as Response
      ).status,
    ).toBe(400);
    expect(
      ((await run(uploadAction, uploadRequest(cookie, { patientId: p.id, kind: "other" }))) as Response).status,
    ).toBe(400);
    expect(sniffType(new Uint8Array([0xff, 0xd8, 0xff, 0xe0]))?.contentType).toBe("image/jpeg");
  });

  it("refuses the front desk and the patient, and 404s an exam of another patient", async () => {
    const p = await patient();
    const other = await patient();
    const optom = await userByEmail("optometrist@dioptra-demo.test");
    const [exam] = await db.insert(exams).values({ patientId: other.id, optometristId: optom.id }).returning();
    const bytes = await png();
    const f = { bytes, name: "a.png", type: "image/png" };
    expect(
      statusOf(
        await run(uploadAction, uploadRequest(await cookieFor("receptionist"), { patientId: p.id, kind: "other" }, f)),
      ),
    ).toBe(403);
    expect(
      statusOf(
        await run(uploadAction, uploadRequest(await cookieFor("patient"), { patientId: p.id, kind: "other" }, f)),
      ),
    ).toBe(403);
    expect(
      (
        (await run(
          uploadAction,
          uploadRequest(await cookieFor("owner"), { patientId: p.id, examId: exam!.id, kind: "other" }, f),
        )) as Response
      ).status,
    ).toBe(404);
    expect(await db.select().from(documents).where(eq(documents.patientId, p.id))).toHaveLength(0);
  });
});
