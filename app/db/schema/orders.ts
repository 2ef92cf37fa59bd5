import { sql } from "drizzle-orm";
import {
  boolean,
  check,
  doublePrecision,
  foreignKey,
  index,
  integer,
  jsonb,
  pgEnum,
  pgTable,
  primaryKey,
  text,
  timestamp,
  uuid,
} from "drizzle-orm/pg-core";
import { users } from "./auth";
import { feeItems, invoices } from "./billing";
import { patients } from "./patients";
import { prescriptions } from "./prescriptions";

/** Laboratories and suppliers the practice sends orders to; the owner keeps the list. */
export const labs = pgTable("labs", {
  id: uuid().primaryKey().defaultRandom(),
  name: text().notNull(),
  email: text().notNull(),
  phone: text().notNull().default(""),
  /** The practice's account number with the lab, printed on order forms. */
  accountRef: text().notNull().default(""),
  active: boolean().notNull().default(true),
  createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
});

/** The practice's frame stock. Quantity goes down when an order takes a frame and back up when it is cancelled. */
export const frames = pgTable(
  "frames",
  {
    id: uuid().primaryKey().defaultRandom(),
    supplier: text().notNull(),
    model: text().notNull(),
    colour: text().notNull(),
    /** Boxed size as marked on the frame: eye size, bridge, side length (e.g. 52-18-140). */
    size: text().notNull(),
    priceMinor: integer().notNull(),
    quantity: integer().notNull().default(0),
    active: boolean().notNull().default(true),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    check("frames_quantity_nonneg", sql`${t.quantity} >= 0`),
    check("frames_price_nonneg", sql`${t.priceMinor} >= 0`),
  ],
);

export const orderKindEnum = pgEnum("order_kind", ["spectacles", "contact_lenses"]);
export const orderStateEnum = pgEnum("order_state", [
  "draft",
  "sent_to_lab",
  "received",
  "checked",
  "ready_to_collect",
  "collected",
  "remake",
  "cancelled",
]);
export type OrderState = (typeof orderStateEnum.enumValues)[number];
export const spectacleLensTypeEnum = pgEnum("spectacle_lens_type", [
  "single_vision",
  "bifocal",
  "varifocal",
  "occupational",
]);

/**
 * The moves an order may make, per kind. A trigger on optical_orders refuses any change of state
 * not listed here, so no code path can skip or invent a step.
 */
export const orderTransitions = pgTable(
  "order_transitions",
  {
    kind: orderKindEnum().notNull(),
    fromState: orderStateEnum().notNull(),
    toState: orderStateEnum().notNull(),
  },
  (t) => [primaryKey({ columns: [t.kind, t.fromState, t.toState] })],
);

/** A spectacle or contact-lens order, built from a prescription. */
export const opticalOrders = pgTable(
  "optical_orders",
  {
    id: uuid().primaryKey().defaultRandom(),
    number: integer().notNull().generatedAlwaysAsIdentity(),
    kind: orderKindEnum().notNull(),
    state: orderStateEnum().notNull().default("draft"),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "restrict" }),
    prescriptionId: uuid()
      .notNull()
      .references(() => prescriptions.id, { onDelete: "restrict" }),
    labId: uuid()
      .notNull()
      .references(() => labs.id, { onDelete: "restrict" }),
    frameId: uuid().references(() => frames.id, { onDelete: "restrict" }),
    /** The frame as it was when ordered (supplier, model, colour, size), for the order form. */
    frameLabel: text(),
    framePriceMinor: integer(),
    lensType: spectacleLensTypeEnum(),
    lensMaterial: text(),
    coatings: text()
      .array()
      .notNull()
      .default(sql`'{}'::text[]`),
    tint: text().notNull().default(""),
    pdRightMm: doublePrecision(),
    pdLeftMm: doublePrecision(),
    heightRightMm: doublePrecision(),
    heightLeftMm: doublePrecision(),
    /** Contact-lens supply: boxes per eye. */
    boxesRight: integer(),
    boxesLeft: integer(),
    /** Fee-schedule item the lenses (or lens boxes) are charged at. */
    lensFeeItemId: uuid().references(() => feeItems.id, { onDelete: "set null" }),
    notes: text().notNull().default(""),
    invoiceId: uuid().references(() => invoices.id, { onDelete: "set null" }),
    /** An optician's reason for releasing an order whose last check failed. */
    overrideReason: text(),
    createdById: uuid().references(() => users.id, { onDelete: "set null" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    stateChangedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("optical_orders_state_idx").on(t.state, t.stateChangedAt),
    index("optical_orders_patient_idx").on(t.patientId, t.createdAt),
    // The orders list, newest first: every order, and the open ones (its default view).
    index("optical_orders_created_idx").on(t.createdAt, t.id),
    index("optical_orders_open_created_idx")
      .on(t.createdAt, t.id)
      .where(sql`${t.state} not in ('collected', 'cancelled')`),
    check(
      "optical_orders_spectacles_complete",
      sql`${t.kind} <> 'spectacles' or (${t.frameId} is not null and ${t.lensType} is not null and ${t.lensMaterial} is not null and ${t.pdRightMm} between 20 and 45 and ${t.pdLeftMm} between 20 and 45)`,
    ),
    check(
      "optical_orders_cl_complete",
      sql`${t.kind} <> 'contact_lenses' or (${t.boxesRight} between 0 and 24 and ${t.boxesLeft} between 0 and 24 and ${t.boxesRight} + ${t.boxesLeft} > 0)`,
    ),
    check(
      "optical_orders_heights",
      sql`(${t.heightRightMm} is null or ${t.heightRightMm} between 5 and 45) and (${t.heightLeftMm} is null or ${t.heightLeftMm} between 5 and 45)`,
    ),
  ],
);

/** Every change of an order's state: who, when, from and to, and why (remake and cancel reasons). */
export const orderEvents = pgTable(
  "order_events",
  {
    id: uuid().primaryKey().defaultRandom(),
    orderId: uuid()
      .notNull()
      .references(() => opticalOrders.id, { onDelete: "cascade" }),
    kind: orderKindEnum().notNull(),
    fromState: orderStateEnum(),
    toState: orderStateEnum().notNull(),
    actorUserId: uuid().references(() => users.id, { onDelete: "set null" }),
    reason: text().notNull().default(""),
    at: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("order_events_order_idx").on(t.orderId, t.at),
    index("order_events_to_idx").on(t.toState, t.at),
    foreignKey({
      columns: [t.kind, t.fromState, t.toState],
      foreignColumns: [orderTransitions.kind, orderTransitions.fromState, orderTransitions.toState],
    }).onDelete("restrict"),
  ],
);

/** A lensmeter check of received spectacles: the readings as typed, the engine's report and its result. */
export const orderChecks = pgTable(
  "order_checks",
  {
    id: uuid().primaryKey().defaultRandom(),
    orderId: uuid()
      .notNull()
      .references(() => opticalOrders.id, { onDelete: "cascade" }),
    standard: text().notNull(),
    readings: jsonb().notNull(),
    report: jsonb().notNull(),
    pass: boolean().notNull(),
    checkedById: uuid().references(() => users.id, { onDelete: "set null" }),
    at: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index("order_checks_order_idx").on(t.orderId, t.at)],
);

export const orderMessageKindEnum = pgEnum("order_message_kind", ["lab_order", "patient_ready"]);
export const orderMessageStatusEnum = pgEnum("order_message_status", ["queued", "sent", "skipped", "failed"]);

/** E-mails about an order (to the lab, to the patient), each sent at most once by the queue. */
export const orderMessages = pgTable(
  "order_messages",
  {
    id: uuid().primaryKey().defaultRandom(),
    orderId: uuid()
      .notNull()
      .references(() => opticalOrders.id, { onDelete: "cascade" }),
    kind: orderMessageKindEnum().notNull(),
    recipient: text(),
    status: orderMessageStatusEnum().notNull().default("queued"),
    skippedReason: text(),
    attempts: integer().notNull().default(0),
    lastError: text(),
    sentAt: timestamp({ withTimezone: true }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index("order_messages_order_idx").on(t.orderId, t.createdAt)],
);
