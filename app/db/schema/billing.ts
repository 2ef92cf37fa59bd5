import { sql } from "drizzle-orm";
import {
  bigint,
  boolean,
  check,
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
import { exams } from "./exams";
import { patients } from "./patients";
import { defaultSiteId, sites } from "./sites";

/**
 * How a line is taxed: "standard" at the practice's tax rate, "exempt" at none.
 * // common practice: in the UK an eye examination is a VAT-exempt medical service while
 * // dispensed goods (frames, solutions) are standard-rated; local tax law governs.
 */
export const taxCategoryEnum = pgEnum("tax_category", ["standard", "exempt"]);

/** The practice's fee schedule: codes of its own, prices in the currency's minor unit. */
export const feeItems = pgTable(
  "fee_items",
  {
    id: uuid().primaryKey().defaultRandom(),
    code: text().notNull(),
    description: text().notNull(),
    /** Price in minor units (pence, cents) of practice_settings.currency, before tax. */
    priceMinor: integer().notNull(),
    /** "service" (exam, fitting) or "item" (frames, lenses, solutions). */
    kind: text({ enum: ["service", "item"] })
      .notNull()
      .default("service"),
    taxCategory: taxCategoryEnum().notNull().default("exempt"),
    active: boolean().notNull().default(true),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    uniqueIndex("fee_items_code_uq").on(sql`lower(${t.code})`),
    check("fee_items_price_nonneg", sql`${t.priceMinor} >= 0`),
  ],
);

export const invoiceStatusEnum = pgEnum("invoice_status", ["draft", "open", "partially_paid", "paid", "void"]);
export type InvoiceStatus = (typeof invoiceStatusEnum.enumValues)[number];

export const discountKindEnum = pgEnum("discount_kind", ["none", "percent", "amount"]);

/**
 * One invoice. A draft has no number; issuing it (draft → open) takes the next number from
 * invoice_counters in the same transaction, so numbers have no gaps. Totals are computed on the
 * server (app/lib/money) and stored; paid_minor is the net of succeeded payments less refunds.
 */
export const invoices = pgTable(
  "invoices",
  {
    id: uuid().primaryKey().defaultRandom(),
    number: integer(),
    patientId: uuid()
      .notNull()
      .references(() => patients.id, { onDelete: "restrict" }),
    examId: uuid().references(() => exams.id, { onDelete: "set null" }),
    /** The site that issues the invoice (its address on the PDF; takings per site). */
    siteId: uuid()
      .notNull()
      .default(defaultSiteId)
      .references(() => sites.id, { onDelete: "restrict" }),
    status: invoiceStatusEnum().notNull().default("draft"),
    currency: text().notNull(),
    /** Tax rate for standard-rated lines, basis points (2000 = 20 %), copied from the setting. */
    taxRateBp: integer().notNull().default(0),
    discountKind: discountKindEnum().notNull().default("none"),
    /** Basis points for "percent", minor units for "amount". */
    discountValue: integer().notNull().default(0),
    subtotalMinor: integer().notNull().default(0),
    discountMinor: integer().notNull().default(0),
    taxMinor: integer().notNull().default(0),
    totalMinor: integer().notNull().default(0),
    paidMinor: integer().notNull().default(0),
    notes: text().notNull().default(""),
    issuedAt: timestamp({ withTimezone: true }),
    voidedAt: timestamp({ withTimezone: true }),
    voidReason: text(),
    payLinkSentAt: timestamp({ withTimezone: true }),
    createdById: uuid().references(() => users.id, { onDelete: "set null" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    uniqueIndex("invoices_number_uq").on(t.number),
    index("invoices_status_created_idx").on(t.status, t.createdAt),
    /** The invoices list: newest first, a page at a time, without sorting every invoice. */
    index("invoices_created_idx").on(t.createdAt, t.id),
    index("invoices_patient_idx").on(t.patientId),
    index("invoices_exam_idx").on(t.examId),
    index("invoices_site_idx").on(t.siteId),
    check("invoices_number_when_issued", sql`(${t.status} = 'draft') = (${t.number} is null)`),
    check(
      "invoices_amounts_nonneg",
      sql`${t.subtotalMinor} >= 0 and ${t.discountMinor} >= 0 and ${t.taxMinor} >= 0 and ${t.totalMinor} >= 0`,
    ),
    check("invoices_paid_range", sql`${t.paidMinor} >= 0 and ${t.paidMinor} <= ${t.totalMinor}`),
    check(
      "invoices_discount_range",
      sql`${t.discountValue} >= 0 and (${t.discountKind} <> 'percent' or ${t.discountValue} <= 10000)`,
    ),
    check("invoices_tax_rate_range", sql`${t.taxRateBp} between 0 and 10000`),
  ],
);

export const invoiceLines = pgTable(
  "invoice_lines",
  {
    id: uuid().primaryKey().defaultRandom(),
    invoiceId: uuid()
      .notNull()
      .references(() => invoices.id, { onDelete: "cascade" }),
    feeItemId: uuid().references(() => feeItems.id, { onDelete: "set null" }),
    position: integer().notNull(),
    code: text().notNull(),
    description: text().notNull(),
    kind: text({ enum: ["service", "item"] })
      .notNull()
      .default("service"),
    taxCategory: taxCategoryEnum().notNull().default("exempt"),
    quantity: integer().notNull().default(1),
    unitPriceMinor: integer().notNull(),
    /** Computed by app/lib/money: gross, share of the invoice discount, net, tax. */
    grossMinor: integer().notNull().default(0),
    discountMinor: integer().notNull().default(0),
    netMinor: integer().notNull().default(0),
    taxMinor: integer().notNull().default(0),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("invoice_lines_invoice_idx").on(t.invoiceId, t.position),
    check("invoice_lines_quantity", sql`${t.quantity} between 1 and 1000`),
    check("invoice_lines_price_nonneg", sql`${t.unitPriceMinor} >= 0`),
  ],
);

/** The counter behind invoice numbers: one row per series, incremented inside the issuing transaction. */
export const invoiceCounters = pgTable("invoice_counters", {
  series: text().primaryKey(),
  lastNumber: integer().notNull().default(0),
});

export const paymentMethodEnum = pgEnum("payment_method", ["cash", "card_desk", "card_online"]);
export type PaymentMethod = (typeof paymentMethodEnum.enumValues)[number];
export const paymentStatusEnum = pgEnum("payment_status", ["pending", "succeeded", "failed", "flagged"]);

/**
 * Money received (or being received) against an invoice. Desk payments are succeeded when
 * recorded; online ones start pending and only a verified Stripe webhook moves them on.
 * At most one pending online payment per invoice (partial unique index), so two patients'
 * tabs clicking "pay" at once share one checkout instead of charging twice.
 */
export const payments = pgTable(
  "payments",
  {
    id: uuid().primaryKey().defaultRandom(),
    invoiceId: uuid()
      .notNull()
      .references(() => invoices.id, { onDelete: "restrict" }),
    method: paymentMethodEnum().notNull(),
    status: paymentStatusEnum().notNull(),
    amountMinor: integer().notNull(),
    currency: text().notNull(),
    refundedMinor: integer().notNull().default(0),
    reference: text().notNull().default(""),
    stripeCheckoutSessionId: text(),
    stripePaymentIntentId: text(),
    checkoutUrl: text(),
    checkoutExpiresAt: timestamp({ withTimezone: true }),
    /** Last problem reported for this attempt (a declined card, a wrong amount), shown to people. */
    problem: text(),
    /** Stripe's `created` of the last event applied, so an older event never undoes a newer one. */
    lastEventCreated: bigint({ mode: "number" }),
    receivedAt: timestamp({ withTimezone: true }),
    recordedById: uuid().references(() => users.id, { onDelete: "set null" }),
    receiptSentAt: timestamp({ withTimezone: true }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
    updatedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("payments_invoice_idx").on(t.invoiceId),
    index("payments_received_idx").on(t.receivedAt),
    uniqueIndex("payments_checkout_session_uq").on(t.stripeCheckoutSessionId),
    uniqueIndex("payments_payment_intent_uq").on(t.stripePaymentIntentId),
    uniqueIndex("payments_one_pending_online_uq")
      .on(t.invoiceId)
      .where(sql`${t.status} = 'pending' and ${t.method} = 'card_online'`),
    check("payments_amount_positive", sql`${t.amountMinor} > 0`),
    check("payments_refund_range", sql`${t.refundedMinor} >= 0 and ${t.refundedMinor} <= ${t.amountMinor}`),
  ],
);

export const refunds = pgTable(
  "refunds",
  {
    id: uuid().primaryKey().defaultRandom(),
    paymentId: uuid()
      .notNull()
      .references(() => payments.id, { onDelete: "restrict" }),
    amountMinor: integer().notNull(),
    reason: text().notNull().default(""),
    stripeRefundId: text(),
    createdById: uuid().references(() => users.id, { onDelete: "set null" }),
    createdAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    index("refunds_payment_idx").on(t.paymentId),
    index("refunds_created_idx").on(t.createdAt),
    uniqueIndex("refunds_stripe_uq").on(t.stripeRefundId),
    check("refunds_amount_positive", sql`${t.amountMinor} > 0`),
  ],
);

/** Every Stripe webhook event applied, keyed by its id: a second delivery finds its row and changes nothing. */
export const stripeEvents = pgTable("stripe_events", {
  id: text().primaryKey(),
  type: text().notNull(),
  /** Stripe's own `created`, seconds since the epoch. */
  created: bigint({ mode: "number" }).notNull(),
  outcome: text().notNull(),
  paymentId: uuid().references(() => payments.id, { onDelete: "set null" }),
  payload: jsonb().notNull(),
  receivedAt: timestamp({ withTimezone: true }).notNull().defaultNow(),
});
