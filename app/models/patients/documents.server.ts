import { alias } from "drizzle-orm/pg-core";
import { and, count, desc, eq, isNull } from "drizzle-orm";
import { documents, exams, patients, users } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import type { SessionUser } from "~/utils/session.server";
import { storage, StorageUnavailableError } from "~/utils/storage.server";
import { isUuid } from "./patient-schema";
import { thumbnailOf } from "./thumbnail.server";
import { DomainError, notFound, type DomainErrorOptions } from "~/utils/failure.server";
import { openStored } from "~/utils/storage-response.server";

/** Largest upload accepted, bytes. */
export const MAX_UPLOAD_BYTES = 15 * 1024 * 1024;
export const DOCUMENT_KINDS = {
  fundus_photo: "Fundus photograph",
  field_printout: "Visual field printout",
  outside_record: "Outside record",
  other: "Other",
} as const;
export type DocumentKind = keyof typeof DOCUMENT_KINDS;

type Sniffed = { contentType: "image/jpeg" | "image/png" | "image/webp" | "application/pdf"; extension: string };

/** The file's type from its first bytes (magic numbers), whatever its name says. */
export function sniffType(bytes: Uint8Array): Sniffed | null {
  const starts = (sig: number[], at = 0) => sig.every((b, i) => bytes[at + i] === b);
  if (starts([0xff, 0xd8, 0xff])) return { contentType: "image/jpeg", extension: "jpg" };
  if (starts([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a])) return { contentType: "image/png", extension: "png" };
  if (starts([0x52, 0x49, 0x46, 0x46]) && starts([0x57, 0x45, 0x42, 0x50], 8))
    return { contentType: "image/webp", extension: "webp" };
  if (starts([0x25, 0x50, 0x44, 0x46, 0x2d])) return { contentType: "application/pdf", extension: "pdf" };
  return null;
}

/** A refused upload; the message names what is wrong with the file (field `file`). */
export class UploadError extends DomainError {
  constructor(message: string, options: DomainErrorOptions = {}) {
    super(message, { field: "file", ...options });
  }
}

/** Checks, stores (with a thumbnail for images) and records one upload. */
export async function saveUpload(
  user: SessionUser,
  input: { patientId: string; examId: string | null; kind: DocumentKind; description: string; file: File },
  request: Request,
) {
  const { file } = input;
  if (file.size === 0) throw new UploadError("The file is empty.");
  if (file.size > MAX_UPLOAD_BYTES)
    throw new UploadError(
      `The file is ${(file.size / 1024 / 1024).toFixed(1)} MB; the limit is ${MAX_UPLOAD_BYTES / 1024 / 1024} MB.`,
      { status: 413 },
    );
  const bytes = new Uint8Array(await file.arrayBuffer());
  const type = sniffType(bytes);
  if (!type)
    throw new UploadError(
      "Only JPEG, PNG or WebP images and PDF documents can be attached (checked from the file's content, not its name).",
      { status: 415 },
    );
  let thumbnail: Buffer | null = null;
  if (type.contentType !== "application/pdf") {
    try {
      thumbnail = await thumbnailOf(bytes);
    } catch {
      throw new UploadError("The image could not be read; it may be damaged.", { status: 415 });
    }
  }
  // The objects first, then the row: a row never points at a missing object. If the store is
  // down nothing is recorded (an object already written is removed) and the upload can be retried.
  let key: string | null = null;
  let thumbnailKey: string | null = null;
  try {
    key = await storage.put(bytes, { prefix: "documents", extension: type.extension, contentType: type.contentType });
    thumbnailKey = thumbnail
      ? await storage.put(thumbnail, { prefix: "thumbnails", extension: "jpg", contentType: "image/jpeg" })
      : null;
  } catch (e) {
    if (key) await storage.delete(key).catch(() => undefined);
    if (e instanceof StorageUnavailableError)
      throw new UploadError(
        "The file could not be stored just now: file storage is not reachable. Nothing was saved; please try the upload again in a few minutes.",
        { status: 503 },
      );
    throw e;
  }
  const storedKey = key;
  try {
    return await db.transaction(async (tx) => {
      const [row] = await tx
        .insert(documents)
        .values({
          patientId: input.patientId,
          examId: input.examId,
          kind: input.kind,
          description: input.description,
          originalName: file.name.slice(0, 200) || "upload",
          contentType: type.contentType,
          sizeBytes: file.size,
          storageKey: storedKey,
          thumbnailKey,
          uploadedById: user.id,
        })
        .returning({ id: documents.id });
      await audit(
        {
          action: "document.uploaded",
          actorUserId: user.id,
          entityType: "document",
          entityId: row!.id,
          patientId: input.patientId,
          detail: { examId: input.examId, kind: input.kind, contentType: type.contentType, sizeBytes: file.size },
          request,
        },
        tx,
      );
      return row!.id;
    });
  } catch (e) {
    await storage.delete(storedKey).catch(() => undefined);
    if (thumbnailKey) await storage.delete(thumbnailKey).catch(() => undefined);
    throw e;
  }
}

/**
 * One of a patient's documents, opened from object storage for download: the file itself or its
 * thumbnail. Reading the file (not the thumbnail) is audited. 404 when the patient has no such
 * document or the object is missing.
 */
export async function openPatientDocument(
  user: SessionUser,
  patientId: string,
  documentId: string,
  variant: "file" | "thumbnail",
  request: Request,
) {
  const [doc] = await db
    .select()
    .from(documents)
    .where(and(eq(documents.id, documentId), eq(documents.patientId, patientId)));
  if (!doc) notFound();
  const key = variant === "thumbnail" ? doc.thumbnailKey : doc.storageKey;
  const file = key ? await openStored(key) : null;
  if (!file) notFound();
  if (variant === "file")
    await audit({
      action: "document.read",
      actorUserId: user.id,
      entityType: "document",
      entityId: doc.id,
      patientId: doc.patientId,
      request,
    });
  return { doc, file };
}

/** A patient's upload target: the patient and, when given, one of the patient's exams; null when either is unknown. */
export async function uploadTarget(patientId: string, examId: string) {
  if (!isUuid(patientId)) return null;
  const [patient] = await db.select({ id: patients.id }).from(patients).where(eq(patients.id, patientId));
  if (!patient) return null;
  if (!examId) return { patientId, examId: null };
  if (!isUuid(examId)) return null;
  const [exam] = await db
    .select({ id: exams.id })
    .from(exams)
    .where(and(eq(exams.id, examId), eq(exams.patientId, patientId)));
  return exam ? { patientId, examId: exam.id } : null;
}

const reviewers = alias(users, "reviewers");
const documentColumns = {
  id: documents.id,
  examId: documents.examId,
  kind: documents.kind,
  description: documents.description,
  originalName: documents.originalName,
  contentType: documents.contentType,
  sizeBytes: documents.sizeBytes,
  hasThumbnail: documents.thumbnailKey,
  createdAt: documents.createdAt,
  uploadedBy: users.name,
  reviewedAt: documents.reviewedAt,
  reviewedBy: reviewers.name,
};
const view = <T extends { hasThumbnail: string | null; createdAt: Date; reviewedAt: Date | null }>({
  hasThumbnail,
  createdAt,
  reviewedAt,
  ...r
}: T) => ({
  ...r,
  hasThumbnail: !!hasThumbnail,
  createdAt: createdAt.toISOString(),
  reviewedAt: reviewedAt?.toISOString() ?? null,
});

/** The files of one exam (a handful), or every file of a patient; newest first. */
export async function documentsOf(patientId: string, examId?: string) {
  const rows = await db
    .select(documentColumns)
    .from(documents)
    .innerJoin(users, eq(users.id, documents.uploadedById))
    .leftJoin(reviewers, eq(reviewers.id, documents.reviewedById))
    .where(and(eq(documents.patientId, patientId), examId ? eq(documents.examId, examId) : undefined))
    .orderBy(desc(documents.createdAt), desc(documents.id));
  return rows.map(view);
}

/** Files shown per page of the chart's documents. */
export const DOCUMENTS_PAGE_SIZE = 24;

/** One page of a patient's files for the chart, newest first, with the number there are. */
export async function documentsPage(patientId: string, page = 1) {
  const [rows, [counted]] = await Promise.all([
    db
      .select(documentColumns)
      .from(documents)
      .innerJoin(users, eq(users.id, documents.uploadedById))
      .leftJoin(reviewers, eq(reviewers.id, documents.reviewedById))
      .where(eq(documents.patientId, patientId))
      .orderBy(desc(documents.createdAt), desc(documents.id))
      .limit(DOCUMENTS_PAGE_SIZE)
      .offset((page - 1) * DOCUMENTS_PAGE_SIZE),
    db.select({ n: count() }).from(documents).where(eq(documents.patientId, patientId)),
  ]);
  return { rows: rows.map(view), paging: { page, pageSize: DOCUMENTS_PAGE_SIZE, total: counted?.n ?? 0 } };
}
export type DocumentView = Awaited<ReturnType<typeof documentsOf>>[number];

/**
 * Records that a clinician read a result (a field printout, a scan report…): who and when, with
 * an audit row, in one transaction. The first review stands; marking it again changes nothing.
 * Returns false when the patient has no such document.
 */
export async function markDocumentReviewed(
  user: SessionUser,
  patientId: string,
  documentId: string,
  request: Request,
): Promise<{ found: boolean; alreadyBy: string | null }> {
  return db.transaction(async (tx) => {
    const [doc] = await tx
      .select({ id: documents.id, reviewedById: documents.reviewedById })
      .from(documents)
      .where(and(eq(documents.id, documentId), eq(documents.patientId, patientId)))
      .for("update");
    if (!doc) return { found: false, alreadyBy: null };
    const [marked] = await tx
      .update(documents)
      .set({ reviewedAt: new Date(), reviewedById: user.id })
      .where(and(eq(documents.id, documentId), isNull(documents.reviewedAt)))
      .returning({ id: documents.id });
    if (!marked) {
      const [by] = await tx.select({ name: users.name }).from(users).where(eq(users.id, doc.reviewedById!));
      return { found: true, alreadyBy: by?.name ?? "a colleague" };
    }
    await audit(
      {
        action: "document.reviewed",
        actorUserId: user.id,
        entityType: "document",
        entityId: documentId,
        patientId,
        request,
      },
      tx,
    );
    return { found: true, alreadyBy: null };
  });
}
