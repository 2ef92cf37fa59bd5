import { sql } from "drizzle-orm";
import {
  bigint,
  boolean,
  check,
  date,
  index,
  integer,
  jsonb,
  pgEnum,
  pgTable,
  text,
  timestamp,
  uniqueIndex,
  uuid,
} from "drizzle-orm/pg-core";
import { users } from "./auth";
import { documents } from "./documents";
import { exams } from "./exams";
import { patients } from "./patients";

export const referralDeliveryEnum = pgEnum("referral_delivery", ["email", "post", "fax"]);

/** The owner's directory of ophthalmologists and clinics that referrals go to. */
export const referralRecipients = pgTable(
  "referral_recipients",
  {
    id: uuid().primaryKey().defaultRandom(),
    name: text().notNull(),
    clinic: text().notNull().default(""),
    specialty: text().notNull().default(""),
    email: text(),
    phone: text().notNull().default(""),
    addressLine1: text().notNull().default(""),
    addressLine2: text().notNull().default(""),
    city: text().notNull().default(""),
    postcode: text().notNull().default(""),
    /** How the recipient prefers to receive letters; Dioptra sends by e-mail, the others are printed from the PDF. */
    preferredDelivery: referralDeliveryEnum().notNull().default("email"),
    notes: text().notNull().default(""),
    active: boolean().notNull().default(true),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("referral_recipients_name_idx").on(t.name),
    check("referral_recipients_email_needed", sql`${t.preferredDelivery} <> 'email' or ${t.email} is not null`),
  ],
);

export const referralUrgencyEnum = pgEnum("referral_urgency", ["routine", "soon", "urgent", "same_day"]);
export type ReferralUrgency = (typeof referralUrgencyEnum.enumValues)[number];

/**
 * Stored state of a referral. "Seen" and "overdue" are derived (app/lib/referrals) from the
 * appointment date, the send time and the practice's time frame for the urgency.
 */
export const referralStatusEnum = pgEnum("referral_status", [
  "draft",
  "queued",
  "sent",
  "acknowledged",
  "replied",
  "withdrawn",
]);
export type ReferralStatus = (typeof referralStatusEnum.enumValues)[number];

/** What the letter was built from: the signed exam's measured values, copied when the draft was made. */
export type ReferralSnapshot = {
  examinedAt: string;
  signedAt: string | null;
  examiner: string;
  history: {
    reason: string;
    symptoms: string;
    ocularHistory: string;
    generalHistory: string;
    medications: string;
    familyHistory: string;
  } | null;
  acuity: {
    eye: "right" | "left" | "both";
    distance: "distance" | "near";
    correction: "unaided" | "habitual" | "best" | "pinhole";
    notation: string;
    logMar: number;
    scale?: string | null;
  }[];
  refraction: {
    kind: string;
    eye: "right" | "left";
    text: string;
    add: number | null;
    prism: string | null;
    va: string | null;
  }[];
  iop: { eye: "right" | "left"; mmHg: number; method: string; time: string; reading?: number }[];
  /** Added with the structured findings; absent on letters drafted before them. */
  cornealThickness?: { eye: "right" | "left"; micrometres: number }[];
  redFlags?: {
    flashes: string | null;
    newFloaters: string | null;
    curtain: string | null;
    suddenLoss: string | null;
    severePain: string | null;
    redEye: string | null;
    distortion: string | null;
    newDiplopia: boolean;
    gcaSymptoms: boolean;
    headache?: boolean;
    notes: string;
  } | null;
  pupils?: {
    eye: "right" | "left";
    equalReactive: boolean;
    rapd: boolean;
    larger: boolean;
    sizeMm: number | null;
    notes: string;
  }[];
  anteriorChamber?: {
    eye: "right" | "left";
    vanHerick: number | null;
    cells: string | null;
    hyphaema: boolean;
    hypopyon: boolean;
    notes: string;
  }[];
  discs?: {
    eye: "right" | "left";
    verticalCd: number | null;
    margins: string | null;
    swelling: boolean;
    haemorrhage: boolean;
    pallor: boolean;
    notes: string;
  }[];
  fundus?: {
    eye: "right" | "left";
    vitreousDetachment: boolean;
    vitreousPigment: boolean;
    retinalBreak: boolean;
    retinalDetachment: boolean;
    drusen: boolean;
    suspectedWetAmd: boolean;
    maculaNotes: string;
    peripheryNotes: string;
  }[];
  dilations?: { drug: string; strengthPercent: number; eye: string; instilledAt: string }[];
  triage?: {
    urgency: string | null;
    reasons: { urgency: string; eye?: string; rule: string; source: string }[];
  } | null;
  colour: {
    eye: "right" | "left";
    test: string;
    platesCorrect: number | null;
    platesShown: number | null;
    result: string;
    notes: string;
  }[];
  fields: {
    eye: "right" | "left";
    method: string;
    blindSpot: { xDeg: number; yDeg: number; widthDeg: number; heightDeg: number } | null;
    defectPresent: boolean;
    defects: string;
    reliability: string | null;
  }[];
  diagnoses: { code: string; label: string; eye: string }[];
  /** The exam's assessment and plan (absent in snapshots taken before letters carried them). */
  assessment?: { assessment: string; plan: string } | null;
  prompts: { code: string; eye: string; message: string; value: number | string; rule: string; source: string }[];
};

/** One referral letter from a signed exam to a recipient, tracked until the reply. */
export const referrals = pgTable(
  "referrals",
  {
    id: uuid().primaryKey().defaultRandom(),
    /** The practice's running number of the referral, shown as its reference (REF-00042). */
    number: integer().notNull().generatedAlwaysAsIdentity(),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "restrict" }),
    examId: uuid()
      .notNull()
      .references(() => exams.id, { onDelete: "restrict" }),
    recipientId: uuid().references(() => referralRecipients.id, { onDelete: "restrict" }),
    createdById: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "restrict" }),
    status: referralStatusEnum().notNull().default("draft"),
    urgency: referralUrgencyEnum().notNull().default("routine"),
    /** What the exam's triage proposed when the draft was made (null = no referral proposed). */
    proposedUrgency: referralUrgencyEnum(),
    /** Why the optometrist chose a lower urgency than proposed; kept with the letter. */
    urgencyOverrideReason: text(),
    reason: text().notNull().default(""),
    body: text().notNull().default(""),
    relevantHistory: text().notNull().default(""),
    additionalFindings: text().notNull().default(""),
    /** Keys ("CODE:eye") of the exam's prompts the optometrist kept in the letter. */
    selectedFindings: jsonb().$type<string[]>().notNull().default([]),
    snapshot: jsonb().$type<ReferralSnapshot>().notNull(),
    /** Days allowed for the urgency, copied from the practice's setting when sent. */
    timeFrameDays: integer(),
    queuedAt: timestamp({ withTimezone: true }),
    sentAt: timestamp({ withTimezone: true }),
    acknowledgedAt: timestamp({ withTimezone: true }),
    acknowledgedBy: text(),
    appointmentOn: date({ mode: "string" }),
    repliedAt: timestamp({ withTimezone: true }),
    lastChasedAt: timestamp({ withTimezone: true }),
    withdrawnAt: timestamp({ withTimezone: true }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("referrals_status_idx").on(t.status, t.createdAt),
    index("referrals_patient_idx").on(t.patientId, t.createdAt),
    // The tracking list, newest first (ties by id ascending).
    index("referrals_created_idx").on(t.createdAt.desc().nullsFirst(), t.id),
    index("referrals_exam_idx").on(t.examId),
    check("referrals_sent_has_recipient", sql`${t.status} = 'draft' or ${t.recipientId} is not null`),
    check("referrals_sent_at", sql`${t.status} not in ('sent', 'acknowledged', 'replied') or ${t.sentAt} is not null`),
    check("referrals_time_frame", sql`${t.timeFrameDays} is null or ${t.timeFrameDays} between 0 and 730`),
  ],
);

/** Uploads of the patient chosen to go with the letter (appended to the PDF or listed). */
export const referralAttachments = pgTable(
  "referral_attachments",
  {
    referralId: uuid()
      .notNull()
      .references(() => referrals.id, { onDelete: "cascade" }),
    documentId: uuid()
      .notNull()
      .references(() => documents.id, { onDelete: "restrict" }),
    position: integer().notNull().default(0),
  },
  (t) => [uniqueIndex("referral_attachments_uq").on(t.referralId, t.documentId)],
);

/**
 * A signed link handed to the recipient. The link's id is the nonce inside the signed token;
 * revoking the row (or letting it expire) kills the link even though its signature stays valid.
 */
export const referralLinks = pgTable(
  "referral_links",
  {
    id: uuid().primaryKey().defaultRandom(),
    referralId: uuid()
      .notNull()
      .references(() => referrals.id, { onDelete: "cascade" }),
    expiresAt: timestamp({ withTimezone: true }).notNull(),
    revokedAt: timestamp({ withTimezone: true }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    lastOpenedAt: timestamp({ withTimezone: true }),
  },
  (t) => [
    index("referral_links_referral_idx").on(t.referralId),
    // At most one live link per referral: issuing a new one revokes the old in the same transaction.
    uniqueIndex("referral_links_one_live_uq")
      .on(t.referralId)
      .where(sql`${t.revokedAt} is null`),
  ],
);

export const referralMessageKindEnum = pgEnum("referral_message_kind", ["letter", "chase", "reply_notice"]);
export const referralMessageStatusEnum = pgEnum("referral_message_status", ["queued", "sent", "failed"]);

/** Every e-mail of a referral: queued, sent once (row-locked), retried on failure with the last error kept. */
export const referralMessages = pgTable(
  "referral_messages",
  {
    id: uuid().primaryKey().defaultRandom(),
    referralId: uuid()
      .notNull()
      .references(() => referrals.id, { onDelete: "cascade" }),
    kind: referralMessageKindEnum().notNull(),
    status: referralMessageStatusEnum().notNull().default("queued"),
    recipient: text().notNull(),
    linkId: uuid().references(() => referralLinks.id, { onDelete: "set null" }),
    attempts: integer().notNull().default(0),
    lastError: text(),
    sentAt: timestamp({ withTimezone: true }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("referral_messages_referral_idx").on(t.referralId, t.createdAt),
    // The letter itself is queued once per referral (a retry reuses its row).
    uniqueIndex("referral_messages_one_letter_uq")
      .on(t.referralId)
      .where(sql`${t.kind} = 'letter'`),
  ],
);

/** The referral's own timeline (drafted, sent, opened, acknowledged, replied, chased…). Append-only. */
export const referralEvents = pgTable(
  "referral_events",
  {
    id: bigint({ mode: "number" }).primaryKey().generatedAlwaysAsIdentity(),
    referralId: uuid()
      .notNull()
      .references(() => referrals.id, { onDelete: "cascade" }),
    kind: text().notNull(),
    actorUserId: uuid().references(() => users.id, { onDelete: "set null" }),
    /** For the recipient's actions through the link: the name they gave. */
    actorName: text(),
    detail: jsonb().$type<Record<string, unknown>>(),
    at: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index("referral_events_referral_idx").on(t.referralId, t.at)],
);

/**
 * A reply from the recipient, shown in the patient's chart, with an optional consult letter
 * (PDF or image) kept behind the storage interface.
 */
export const referralReplies = pgTable(
  "referral_replies",
  {
    id: uuid().primaryKey().defaultRandom(),
    referralId: uuid()
      .notNull()
      .references(() => referrals.id, { onDelete: "cascade" }),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "restrict" }),
    authorName: text().notNull(),
    body: text().notNull().default(""),
    fileName: text(),
    fileType: text(),
    /** The consult letter's bytes behind the storage interface (app/utils/storage.server.ts). */
    fileKey: text(),
    fileSize: integer(),
    readAt: timestamp({ withTimezone: true }),
    readById: uuid().references(() => users.id, { onDelete: "set null" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("referral_replies_patient_idx").on(t.patientId, t.createdAt),
    index("referral_replies_referral_idx").on(t.referralId),
    check("referral_replies_content", sql`length(${t.body}) > 0 or ${t.fileKey} is not null`),
    check(
      "referral_replies_file_type",
      sql`${t.fileType} is null or ${t.fileType} in ('application/pdf', 'image/jpeg', 'image/png')`,
    ),
  ],
);
