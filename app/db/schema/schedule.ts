import { sql } from "drizzle-orm";
import {
  bigint,
  boolean,
  check,
  date,
  foreignKey,
  index,
  integer,
  pgEnum,
  pgTable,
  text,
  timestamp,
  uniqueIndex,
  uuid,
} from "drizzle-orm/pg-core";
import { roleEnum, users } from "./auth";
import { feeItems } from "./billing";
import { patients } from "./patients";
import { defaultSiteId, rooms, sites } from "./sites";

/** Kinds of visit the practice offers; the owner keeps them. */
export const appointmentTypes = pgTable(
  "appointment_types",
  {
    id: uuid().primaryKey().defaultRandom(),
    name: text().notNull(),
    durationMinutes: integer().notNull(),
    defaultFeeItemId: uuid().references(() => feeItems.id, { onDelete: "set null" }),
    /** Months until the patient is due again after this kind of visit (null: the practice's default by age). */
    recallMonths: integer(),
    /** Roles whose members may be booked as the provider of this kind of visit. */
    performerRoles: roleEnum()
      .array()
      .notNull()
      .default(sql`'{owner,optometrist}'::role[]`),
    /** Counts as a routine exam for recalls (a completed visit of this type resets the recall clock). */
    routineExam: boolean().notNull().default(true),
    /** Patients may book this kind of visit themselves from the portal, into free slots. */
    onlineBooking: boolean().notNull().default(false),
    active: boolean().notNull().default(true),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    check("appointment_types_duration", sql`${t.durationMinutes} between 5 and 480`),
    check("appointment_types_recall_months", sql`${t.recallMonths} is null or ${t.recallMonths} between 1 and 120`),
  ],
);

export const appointmentStatusEnum = pgEnum("appointment_status", [
  "booked",
  "confirmed",
  "arrived",
  "in_exam",
  "completed",
  "cancelled",
  "no_show",
]);
export type AppointmentStatus = (typeof appointmentStatusEnum.enumValues)[number];

/**
 * One booked visit. No double booking of a provider is enforced by an exclusion constraint over
 * the provider's time range for live (not cancelled / no-show) appointments: see the migration.
 */
export const appointments = pgTable(
  "appointments",
  {
    id: uuid().primaryKey().defaultRandom(),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "restrict" }),
    providerId: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "restrict" }),
    appointmentTypeId: uuid()
      .notNull()
      .references(() => appointmentTypes.id, { onDelete: "restrict" }),
    /** Where the visit is (the default site unless given). */
    siteId: uuid()
      .notNull()
      .default(defaultSiteId)
      .references(() => sites.id, { onDelete: "restrict" }),
    /** The room, which must be at the same site (composite foreign key); none = not assigned. */
    roomId: uuid(),
    startsAt: timestamp({ withTimezone: true }).notNull(),
    endsAt: timestamp({ withTimezone: true }).notNull(),
    status: appointmentStatusEnum().notNull().default("booked"),
    notes: text().notNull().default(""),
    createdById: uuid().references(() => users.id, { onDelete: "set null" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    /** Who last changed the status, and when (the full trail is in appointment_status_changes). */
    statusChangedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    statusChangedById: uuid().references(() => users.id, { onDelete: "set null" }),
    /** Bumped on every move or resize; the .ics SEQUENCE. */
    revision: integer().notNull().default(0),
  },
  (t) => [
    check("appointments_end_after_start", sql`${t.endsAt} > ${t.startsAt}`),
    // Calendar queries bound their index scan by the longest possible appointment.
    check("appointments_at_most_8_hours", sql`${t.endsAt} - ${t.startsAt} <= interval '8 hours'`),
    index("appointments_provider_start_idx").on(t.providerId, t.startsAt),
    index("appointments_start_idx").on(t.startsAt),
    index("appointments_patient_idx").on(t.patientId, t.startsAt),
    index("appointments_site_start_idx").on(t.siteId, t.startsAt),
    foreignKey({
      name: "appointments_room_at_site_fk",
      columns: [t.roomId, t.siteId],
      foreignColumns: [rooms.id, rooms.siteId],
    }).onDelete("restrict"),
  ],
);

/** Every status change of an appointment: from, to, who and when. Append-only. */
export const appointmentStatusChanges = pgTable(
  "appointment_status_changes",
  {
    id: bigint({ mode: "number" }).primaryKey().generatedAlwaysAsIdentity(),
    appointmentId: uuid()
      .notNull()
      .references(() => appointments.id, { onDelete: "cascade" }),
    fromStatus: appointmentStatusEnum(),
    toStatus: appointmentStatusEnum().notNull(),
    changedById: uuid().references(() => users.id, { onDelete: "set null" }),
    changedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index("appointment_status_changes_appt_idx").on(t.appointmentId, t.changedAt)],
);

/** Every move or resize of an appointment: where it was, where it went, who moved it and when. Append-only. */
export const appointmentMoves = pgTable(
  "appointment_moves",
  {
    id: bigint({ mode: "number" }).primaryKey().generatedAlwaysAsIdentity(),
    appointmentId: uuid()
      .notNull()
      .references(() => appointments.id, { onDelete: "cascade" }),
    fromStartsAt: timestamp({ withTimezone: true }).notNull(),
    fromEndsAt: timestamp({ withTimezone: true }).notNull(),
    fromProviderId: uuid().references(() => users.id, { onDelete: "set null" }),
    toStartsAt: timestamp({ withTimezone: true }).notNull(),
    toEndsAt: timestamp({ withTimezone: true }).notNull(),
    toProviderId: uuid().references(() => users.id, { onDelete: "set null" }),
    movedById: uuid().references(() => users.id, { onDelete: "set null" }),
    movedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index("appointment_moves_appt_idx").on(t.appointmentId, t.movedAt)],
);

/**
 * A provider's working hours: one span per weekday (ISO weekday 1 = Monday … 7 = Sunday),
 * in minutes after local midnight in the site's time zone, at one site (and optionally one
 * room) that day, so a clinician can work at different sites on different days. No row: not working.
 */
export const workingHours = pgTable(
  "working_hours",
  {
    id: uuid().primaryKey().defaultRandom(),
    providerId: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "cascade" }),
    siteId: uuid()
      .notNull()
      .default(defaultSiteId)
      .references(() => sites.id, { onDelete: "restrict" }),
    /** The room the provider uses that day; bookings without a room take it. */
    roomId: uuid(),
    weekday: integer().notNull(),
    startMinute: integer().notNull(),
    endMinute: integer().notNull(),
  },
  (t) => [
    uniqueIndex("working_hours_provider_day_uq").on(t.providerId, t.weekday),
    foreignKey({
      name: "working_hours_room_at_site_fk",
      columns: [t.roomId, t.siteId],
      foreignColumns: [rooms.id, rooms.siteId],
    }).onDelete("restrict"),
    check("working_hours_weekday", sql`${t.weekday} between 1 and 7`),
    check(
      "working_hours_span",
      sql`${t.startMinute} >= 0 and ${t.endMinute} <= 1440 and ${t.endMinute} > ${t.startMinute}`,
    ),
  ],
);

/** Breaks inside a provider's working day (lunch, admin), same units and site as working_hours. */
export const providerBreaks = pgTable(
  "provider_breaks",
  {
    id: uuid().primaryKey().defaultRandom(),
    providerId: uuid()
      .notNull()
      .references(() => users.id, { onDelete: "cascade" }),
    siteId: uuid()
      .notNull()
      .default(defaultSiteId)
      .references(() => sites.id, { onDelete: "restrict" }),
    weekday: integer().notNull(),
    startMinute: integer().notNull(),
    endMinute: integer().notNull(),
    label: text().notNull().default("Break"),
  },
  (t) => [
    index("provider_breaks_provider_idx").on(t.providerId, t.weekday),
    check("provider_breaks_weekday", sql`${t.weekday} between 1 and 7`),
    check(
      "provider_breaks_span",
      sql`${t.startMinute} >= 0 and ${t.endMinute} <= 1440 and ${t.endMinute} > ${t.startMinute}`,
    ),
  ],
);

/** What a closure is: a public (bank) holiday, a practice closure, or one clinician's leave. */
export const closureKindEnum = pgEnum("closure_kind", ["bank_holiday", "practice", "leave"]);
export type ClosureKind = (typeof closureKindEnum.enumValues)[number];

/**
 * Whole days on which nobody (or, for leave, one clinician) can be booked: from `startsOn` to
 * `endsOn` inclusive, local dates at the site. No site: every site. Leave names its clinician and
 * applies wherever they work; the other kinds name none.
 */
export const closures = pgTable(
  "closures",
  {
    id: uuid().primaryKey().defaultRandom(),
    kind: closureKindEnum().notNull(),
    siteId: uuid().references(() => sites.id, { onDelete: "cascade" }),
    providerId: uuid().references(() => users.id, { onDelete: "cascade" }),
    startsOn: date({ mode: "string" }).notNull(),
    endsOn: date({ mode: "string" }).notNull(),
    reason: text().notNull(),
    createdById: uuid().references(() => users.id, { onDelete: "set null" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("closures_dates_idx").on(t.startsOn, t.endsOn),
    uniqueIndex("closures_bank_holiday_uq")
      .on(t.startsOn)
      .where(sql`${t.kind} = 'bank_holiday' and ${t.siteId} is null`),
    check("closures_range", sql`${t.endsOn} >= ${t.startsOn}`),
    check("closures_leave_names_provider", sql`(${t.kind} = 'leave') = (${t.providerId} is not null)`),
    check("closures_reason", sql`length(${t.reason}) between 1 and 120`),
  ],
);

export const messageStatusEnum = pgEnum("message_status", ["queued", "sent", "skipped", "failed"]);
export const appointmentMessageKindEnum = pgEnum("appointment_message_kind", [
  "confirmation",
  "reminder",
  "cancellation",
  "update",
]);

/**
 * The e-mails about an appointment: one row per (appointment, kind, sequence), so a message is
 * never sent twice; the row is locked and marked sent in the same transaction as the send.
 * Confirmation, reminder and cancellation have sequence 0 (one each); every move adds an
 * "update" whose sequence is the appointment's revision after the move (the calendar SEQUENCE).
 */
export const appointmentMessages = pgTable(
  "appointment_messages",
  {
    id: uuid().primaryKey().defaultRandom(),
    appointmentId: uuid()
      .notNull()
      .references(() => appointments.id, { onDelete: "cascade" }),
    kind: appointmentMessageKindEnum().notNull(),
    /** For an update: the appointment's revision it announces; 0 for the other kinds. */
    sequence: integer().notNull().default(0),
    status: messageStatusEnum().notNull().default("queued"),
    recipient: text(),
    /** When the message is due to go (the reminder's time; now for the others). */
    dueAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    attempts: integer().notNull().default(0),
    lastError: text(),
    /** Why a message was not sent (opted out, no address, cancelled). */
    skippedReason: text(),
    sentAt: timestamp({ withTimezone: true }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    uniqueIndex("appointment_messages_appt_kind_seq_uq").on(t.appointmentId, t.kind, t.sequence),
    index("appointment_messages_created_idx").on(t.createdAt),
  ],
);

/** One bulk send of recall e-mails started by the front desk; progress is counted from its messages. */
export const recallBatches = pgTable("recall_batches", {
  id: uuid().primaryKey().defaultRandom(),
  createdById: uuid().references(() => users.id, { onDelete: "set null" }),
  createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  total: integer().notNull().default(0),
});

/** One recall e-mail to a patient for one due date: never two for the same due date. */
export const recallMessages = pgTable(
  "recall_messages",
  {
    id: uuid().primaryKey().defaultRandom(),
    batchId: uuid()
      .notNull()
      .references(() => recallBatches.id, { onDelete: "cascade" }),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "cascade" }),
    dueDate: date({ mode: "string" }).notNull(),
    /** Where the patient is asked to come: the site of their last visit, else the default site. */
    siteId: uuid()
      .notNull()
      .default(defaultSiteId)
      .references(() => sites.id, { onDelete: "restrict" }),
    status: messageStatusEnum().notNull().default("queued"),
    recipient: text(),
    attempts: integer().notNull().default(0),
    lastError: text(),
    skippedReason: text(),
    sentAt: timestamp({ withTimezone: true }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    uniqueIndex("recall_messages_patient_due_uq").on(t.patientId, t.dueDate),
    index("recall_messages_batch_idx").on(t.batchId),
  ],
);
