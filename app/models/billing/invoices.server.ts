/**
 * Invoices: creating, editing a draft, issuing (the gap-free number), voiding, desk payments and
 * refunds. Every change runs in one transaction with the invoice row locked (SELECT … FOR UPDATE),
 * so two people working on one invoice at once are serialised, and totals are always recomputed on
 * the server by app/lib/money.
 */
import { and, asc, desc, eq, inArray, sql } from "drizzle-orm";
import {
  exams,
  feeItems,
  invoiceCounters,
  invoiceLines,
  invoices,
  patients,
  payments,
  practiceSettings,
  refunds,
  type PaymentMethod,
} from "~/db/schema";
import { appointments, appointmentTypes, sites } from "~/db/schema";
import { formatMoney } from "~/lib/format";
import { siteOrPracticeZone } from "~/models/schedule/sites.server";
import { computeTotals, type Discount } from "~/lib/money";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";
import { isStripeUnreachable, stripe } from "~/utils/payments.server";
import { DomainError, type DomainErrorOptions, notFound } from "~/utils/failure.server";

export const BILLING_ROLES = ["owner", "receptionist"] as const;

/** A refusal with a message meant for the person; `field` names the form field it belongs to. */
/** A refused billing rule; 409 unless said otherwise. */
export class BillingError extends DomainError {
  constructor(message: string, options: DomainErrorOptions = {}) {
    super(message, { status: 409, ...options });
  }
}

type Conn = Tx | typeof db;

export async function practiceBilling(conn: Conn = db) {
  const [p] = await conn.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
  if (!p) throw new Error("practice settings are missing; run the seed");
  return p;
}

/** The columns every list of invoices shows: number, state, amounts and dates. */
export const invoiceSummaryColumns = {
  id: invoices.id,
  number: invoices.number,
  status: invoices.status,
  totalMinor: invoices.totalMinor,
  paidMinor: invoices.paidMinor,
  currency: invoices.currency,
  issuedAt: invoices.issuedAt,
  createdAt: invoices.createdAt,
};

export function invoiceLabel(number: number | null) {
  return number === null ? "Draft" : `INV-${String(number).padStart(6, "0")}`;
}

export function discountOf(inv: { discountKind: "none" | "percent" | "amount"; discountValue: number }): Discount {
  if (inv.discountKind === "percent") return { kind: "percent", basisPoints: inv.discountValue };
  if (inv.discountKind === "amount") return { kind: "amount", minor: inv.discountValue };
  return { kind: "none" };
}

async function lockInvoice(tx: Tx, invoiceId: string) {
  const [inv] = await tx.select().from(invoices).where(eq(invoices.id, invoiceId)).for("update");
  if (!inv) throw new BillingError("There is no such invoice.", { status: 404 });
  return inv;
}

/** Recomputes and stores every line's and the invoice's totals from its lines (drafts take the current tax rate). */
async function recompute(tx: Tx, invoiceId: string) {
  const inv = await lockInvoice(tx, invoiceId);
  const taxRateBp = inv.status === "draft" ? (await practiceBilling(tx)).taxRateBp : inv.taxRateBp;
  const lines = await tx
    .select()
    .from(invoiceLines)
    .where(eq(invoiceLines.invoiceId, invoiceId))
    .orderBy(asc(invoiceLines.position));
  const totals = computeTotals(lines, discountOf(inv), taxRateBp);
  for (const [i, line] of lines.entries()) {
    const t = totals.lines[i]!;
    await tx.update(invoiceLines).set(t).where(eq(invoiceLines.id, line.id));
  }
  await tx
    .update(invoices)
    .set({
      taxRateBp,
      subtotalMinor: totals.subtotalMinor,
      discountMinor: totals.discountMinor,
      taxMinor: totals.taxMinor,
      totalMinor: totals.totalMinor,
      updatedAt: new Date(),
    })
    .where(eq(invoices.id, invoiceId));
  return totals;
}

export type NewLine =
  | { feeItemId: string; quantity: number }
  | {
      custom: {
        description: string;
        unitPriceMinor: number;
        taxCategory: "standard" | "exempt";
        kind: "service" | "item";
      };
      quantity: number;
    };

async function insertLines(tx: Tx, invoiceId: string, lines: NewLine[]) {
  const [{ next } = { next: 0 }] = await tx
    .select({ next: sql<number>`coalesce(max(${invoiceLines.position}), 0)::int` })
    .from(invoiceLines)
    .where(eq(invoiceLines.invoiceId, invoiceId));
  let position = next;
  const ids = lines.flatMap((l) => ("feeItemId" in l ? [l.feeItemId] : []));
  const fees = ids.length ? await tx.select().from(feeItems).where(inArray(feeItems.id, ids)) : [];
  for (const l of lines) {
    position += 1;
    if ("feeItemId" in l) {
      const fee = fees.find((f) => f.id === l.feeItemId);
      if (!fee || !fee.active)
        throw new BillingError("That fee is not in the fee schedule (or has been withdrawn).", {
          status: 400,
          field: "feeItemId",
        });
      await tx.insert(invoiceLines).values({
        invoiceId,
        feeItemId: fee.id,
        position,
        code: fee.code,
        description: fee.description,
        kind: fee.kind,
        taxCategory: fee.taxCategory,
        quantity: l.quantity,
        unitPriceMinor: fee.priceMinor,
      });
    } else {
      await tx.insert(invoiceLines).values({
        invoiceId,
        position,
        code: "MISC",
        description: l.custom.description,
        kind: l.custom.kind,
        taxCategory: l.custom.taxCategory,
        quantity: l.quantity,
        unitPriceMinor: l.custom.unitPriceMinor,
      });
    }
  }
}

/** What an exam brings to its invoice: the patient and the default fee of its appointment's type. */
export async function examForInvoice(examId: string) {
  const [row] = await db
    .select({
      id: exams.id,
      status: exams.status,
      examinedAt: exams.examinedAt,
      patientId: exams.patientId,
      appointmentStatus: appointments.status,
      appointmentType: appointmentTypes.name,
      defaultFeeItemId: appointmentTypes.defaultFeeItemId,
      // The clock of the visit's site (the practice's, for an exam without a visit).
      timeZone: siteOrPracticeZone,
    })
    .from(exams)
    .leftJoin(appointments, eq(appointments.id, exams.appointmentId))
    .leftJoin(appointmentTypes, eq(appointmentTypes.id, appointments.appointmentTypeId))
    .leftJoin(sites, eq(sites.id, appointments.siteId))
    .where(eq(exams.id, examId));
  if (!row) return null;
  const completed = row.status === "signed" || row.appointmentStatus === "completed";
  const [existing] = await db
    .select({ id: invoices.id, number: invoices.number })
    .from(invoices)
    .where(and(eq(invoices.examId, examId), sql`${invoices.status} <> 'void'`))
    .limit(1);
  return { ...row, completed, existingInvoice: existing ?? null };
}

export async function createInvoice(input: {
  patientId: string;
  examId?: string | null;
  lines: NewLine[];
  actorUserId: string;
  request?: Request;
}) {
  return db.transaction(async (tx) => {
    const [patient] = await tx.select({ id: patients.id }).from(patients).where(eq(patients.id, input.patientId));
    if (!patient) throw new BillingError("Choose a patient.", { status: 400, field: "patientId" });
    if (input.examId) {
      const [exam] = await tx.select({ patientId: exams.patientId }).from(exams).where(eq(exams.id, input.examId));
      if (!exam || exam.patientId !== input.patientId)
        throw new BillingError("That exam does not belong to this patient.", { status: 400, field: "examId" });
      // One live invoice per exam: lock the exam row so two clicks cannot raise two.
      await tx.select({ id: exams.id }).from(exams).where(eq(exams.id, input.examId)).for("update");
      const [dup] = await tx
        .select({ id: invoices.id })
        .from(invoices)
        .where(and(eq(invoices.examId, input.examId), sql`${invoices.status} <> 'void'`))
        .limit(1);
      if (dup) throw new BillingError("This exam already has an invoice.", { status: 409 });
    }
    if (!input.lines.length) throw new BillingError("Add at least one line.", { status: 400, field: "lines" });
    const settings = await practiceBilling(tx);
    const [inv] = await tx
      .insert(invoices)
      .values({
        patientId: input.patientId,
        examId: input.examId ?? null,
        siteId: await invoiceSite(tx, input.examId ?? null),
        currency: settings.currency,
        taxRateBp: settings.taxRateBp,
        createdById: input.actorUserId,
      })
      .returning({ id: invoices.id });
    await insertLines(tx, inv!.id, input.lines);
    await recompute(tx, inv!.id);
    await audit(
      {
        action: "billing.invoice_created",
        actorUserId: input.actorUserId,
        entityType: "invoice",
        entityId: inv!.id,
        patientId: input.patientId,
        detail: { examId: input.examId ?? null },
        request: input.request,
      },
      tx,
    );
    return inv!.id;
  });
}

async function editDraft(
  invoiceId: string,
  actorUserId: string,
  action: string,
  detail: Record<string, unknown>,
  fn: (tx: Tx) => Promise<void>,
  request?: Request,
) {
  return db.transaction(async (tx) => {
    const inv = await lockInvoice(tx, invoiceId);
    if (inv.status !== "draft")
      throw new BillingError("Only a draft can be changed. Void this invoice and raise a new one.", { status: 409 });
    await fn(tx);
    const totals = await recompute(tx, invoiceId);
    await audit(
      { action, actorUserId, entityType: "invoice", entityId: invoiceId, patientId: inv.patientId, detail, request },
      tx,
    );
    return totals;
  });
}

export const addLines = (invoiceId: string, lines: NewLine[], actorUserId: string, request?: Request) =>
  editDraft(
    invoiceId,
    actorUserId,
    "billing.lines_added",
    { lines },
    (tx) => insertLines(tx, invoiceId, lines),
    request,
  );

export const removeLine = (invoiceId: string, lineId: string, actorUserId: string, request?: Request) =>
  editDraft(
    invoiceId,
    actorUserId,
    "billing.line_removed",
    { lineId },
    async (tx) => {
      const gone = await tx
        .delete(invoiceLines)
        .where(and(eq(invoiceLines.id, lineId), eq(invoiceLines.invoiceId, invoiceId)))
        .returning({ id: invoiceLines.id });
      if (!gone.length) throw new BillingError("That line is not on this invoice.", { status: 404 });
    },
    request,
  );

export const setDiscount = (invoiceId: string, discount: Discount, actorUserId: string, request?: Request) =>
  editDraft(
    invoiceId,
    actorUserId,
    "billing.discount_set",
    { discount },
    async (tx) => {
      const value =
        discount.kind === "percent" ? discount.basisPoints : discount.kind === "amount" ? discount.minor : 0;
      await tx
        .update(invoices)
        .set({ discountKind: discount.kind, discountValue: value })
        .where(eq(invoices.id, invoiceId));
    },
    request,
  );

export async function deleteDraft(invoiceId: string, actorUserId: string, request?: Request) {
  await db.transaction(async (tx) => {
    const inv = await lockInvoice(tx, invoiceId);
    if (inv.status !== "draft")
      throw new BillingError("Only a draft can be discarded; an issued invoice is voided instead.", { status: 409 });
    await tx.delete(invoices).where(eq(invoices.id, invoiceId));
    await audit(
      {
        action: "billing.draft_discarded",
        actorUserId,
        entityType: "invoice",
        entityId: invoiceId,
        patientId: inv.patientId,
        request,
      },
      tx,
    );
  });
}

/**
 * Issues a draft: takes the next invoice number from the counter row in the same transaction
 * (an upsert, which row-locks the counter until commit), so numbers are consecutive and a failed
 * issue leaves no gap — the counter's increment rolls back with it.
 */
export async function issueInvoice(invoiceId: string, actorUserId: string, request?: Request) {
  return db.transaction(async (tx) => {
    const inv = await lockInvoice(tx, invoiceId);
    if (inv.status !== "draft")
      throw new BillingError(`This invoice is already issued as ${invoiceLabel(inv.number)}.`, { status: 409 });
    const totals = await recompute(tx, invoiceId);
    if (!totals.lines.length) throw new BillingError("Add at least one line before issuing.", { status: 400 });
    if (totals.totalMinor <= 0)
      throw new BillingError(
        "The total is nothing; a zero invoice is not issued. Remove the discount or discard the draft.",
        { status: 400 },
      );
    const [counter] = await tx
      .insert(invoiceCounters)
      .values({ series: "invoice", lastNumber: 1 })
      .onConflictDoUpdate({
        target: invoiceCounters.series,
        set: { lastNumber: sql`${invoiceCounters.lastNumber} + 1` },
      })
      .returning({ number: invoiceCounters.lastNumber });
    const number = counter!.number;
    await tx
      .update(invoices)
      .set({ status: "open", number, issuedAt: new Date(), updatedAt: new Date() })
      .where(eq(invoices.id, invoiceId));
    await audit(
      {
        action: "billing.invoice_issued",
        actorUserId,
        entityType: "invoice",
        entityId: invoiceId,
        patientId: inv.patientId,
        detail: { number, totalMinor: totals.totalMinor },
        request,
      },
      tx,
    );
    return { number };
  });
}

export async function voidInvoice(invoiceId: string, reason: string, actorUserId: string, request?: Request) {
  await db.transaction(async (tx) => {
    const inv = await lockInvoice(tx, invoiceId);
    if (inv.status === "draft") throw new BillingError("A draft is discarded, not voided.", { status: 409 });
    if (inv.status === "void") throw new BillingError("This invoice is already void.", { status: 409 });
    if (inv.paidMinor > 0)
      throw new BillingError("This invoice has payments on it. Refund them first, then void it.", { status: 409 });
    const [pending] = await tx
      .select({ id: payments.id })
      .from(payments)
      .where(and(eq(payments.invoiceId, invoiceId), eq(payments.status, "pending")))
      .limit(1);
    if (pending)
      throw new BillingError("An online payment for this invoice is in progress. Wait for it to finish or expire.", {
        status: 409,
      });
    await tx
      .update(invoices)
      .set({ status: "void", voidedAt: new Date(), voidReason: reason, updatedAt: new Date() })
      .where(eq(invoices.id, invoiceId));
    await audit(
      {
        action: "billing.invoice_voided",
        actorUserId,
        entityType: "invoice",
        entityId: invoiceId,
        patientId: inv.patientId,
        detail: { reason },
        request,
      },
      tx,
    );
  });
}

/** The invoice status that follows from what has been paid. */
export function statusFor(totalMinor: number, paidMinor: number): "open" | "partially_paid" | "paid" {
  return paidMinor >= totalMinor ? "paid" : paidMinor > 0 ? "partially_paid" : "open";
}

/** Adds a succeeded amount to a locked invoice; the caller has checked it fits. */
export async function applyPaid(
  tx: Tx,
  inv: { id: string; totalMinor: number; paidMinor: number },
  deltaMinor: number,
) {
  const paidMinor = inv.paidMinor + deltaMinor;
  await tx
    .update(invoices)
    .set({ paidMinor, status: statusFor(inv.totalMinor, paidMinor), updatedAt: new Date() })
    .where(eq(invoices.id, inv.id));
  return paidMinor;
}

/** Cash or card at the desk: succeeded as soon as it is recorded. At most the amount due. */
/** An identical desk payment (invoice, amount, method, reference) within this window is refused unless confirmed. */
export const REPEAT_PAYMENT_WINDOW_MS = 2 * 60_000;

export async function recordDeskPayment(input: {
  invoiceId: string;
  method: Exclude<PaymentMethod, "card_online">;
  amountMinor: number;
  reference: string;
  confirmRepeat?: boolean;
  actorUserId: string;
  request?: Request;
}) {
  return db.transaction(async (tx) => {
    const inv = await lockInvoice(tx, input.invoiceId);
    if (inv.status !== "open" && inv.status !== "partially_paid") {
      throw new BillingError(
        inv.status === "paid"
          ? "This invoice is already paid."
          : inv.status === "draft"
            ? "Issue the invoice before taking payment."
            : "This invoice is void.",
        { status: 409 },
      );
    }
    if (!input.confirmRepeat) {
      // Checked under the invoice's row lock, so two quick clicks cannot both pass.
      const [same] = await tx
        .select({ createdAt: payments.createdAt })
        .from(payments)
        .where(
          and(
            eq(payments.invoiceId, inv.id),
            eq(payments.method, input.method),
            eq(payments.amountMinor, input.amountMinor),
            eq(payments.reference, input.reference.trim()),
            eq(payments.status, "succeeded"),
            sql`${payments.createdAt} > now() - make_interval(secs => ${REPEAT_PAYMENT_WINDOW_MS / 1000})`,
          ),
        )
        .orderBy(desc(payments.createdAt))
        .limit(1);
      if (same) {
        const ago = Math.max(1, Math.round((Date.now() - same.createdAt.getTime()) / 1000));
        throw new BillingError(
          `The same payment (${formatMoney(input.amountMinor, inv.currency)} by ${input.method === "cash" ? "cash" : "card"}${input.reference.trim() ? `, reference ${input.reference.trim()}` : ""}) was recorded ${ago} seconds ago. If the patient really paid twice, tick the box below and record it again; otherwise leave it.`,
          { status: 409, field: "confirmRepeat" },
        );
      }
    }
    const due = inv.totalMinor - inv.paidMinor;
    if (input.amountMinor > due)
      throw new BillingError(`That is more than the amount due (${formatMoney(due, inv.currency)}).`, {
        status: 400,
        field: "amount",
      });
    const [pending] = await tx
      .select({ id: payments.id })
      .from(payments)
      .where(and(eq(payments.invoiceId, inv.id), eq(payments.status, "pending")))
      .limit(1);
    if (pending) {
      // The patient was sent to an online checkout; now they pay at the desk instead. Close that
      // checkout (its amount is no longer what is due) so it cannot be paid too; a payment that
      // slips through anyway is flagged by the webhook as more than owed.
      await closePendingCheckout(tx, pending.id, "Closed: paid at the desk instead.");
    }
    const [p] = await tx
      .insert(payments)
      .values({
        invoiceId: inv.id,
        method: input.method,
        status: "succeeded",
        amountMinor: input.amountMinor,
        currency: inv.currency,
        reference: input.reference,
        receivedAt: new Date(),
        recordedById: input.actorUserId,
      })
      .returning({ id: payments.id });
    const paidMinor = await applyPaid(tx, inv, input.amountMinor);
    await audit(
      {
        action: "billing.payment_recorded",
        actorUserId: input.actorUserId,
        entityType: "payment",
        entityId: p!.id,
        patientId: inv.patientId,
        detail: { invoiceId: inv.id, method: input.method, amountMinor: input.amountMinor },
        request: input.request,
      },
      tx,
    );
    return { paymentId: p!.id, paidMinor };
  });
}

/** Expires a pending online payment's checkout at Stripe (best effort) and marks it failed. */
export async function closePendingCheckout(tx: Tx, paymentId: string, problem: string) {
  const [p] = await tx.select().from(payments).where(eq(payments.id, paymentId)).for("update");
  if (!p || p.status !== "pending") return;
  if (p.stripeCheckoutSessionId) {
    try {
      await stripe().checkout.sessions.expire(p.stripeCheckoutSessionId);
    } catch (error) {
      if (!isStripeUnreachable(error)) {
        // Stripe refuses to expire a session that is no longer open: it may just have been paid.
        // Leave the payment pending; its webhook decides.
        const session = await stripe()
          .checkout.sessions.retrieve(p.stripeCheckoutSessionId)
          .catch(() => null);
        if (session && session.status === "complete")
          throw new BillingError("An online payment for this invoice has just gone through; refresh to see it.", {
            status: 409,
          });
      }
    }
  }
  await tx.update(payments).set({ status: "failed", problem, updatedAt: new Date() }).where(eq(payments.id, paymentId));
}

/**
 * Refunds part or all of a succeeded payment. Card-online payments are refunded through Stripe
 * first (with an idempotency key, while the payment row is locked), then recorded.
 */
export async function refundPayment(input: {
  paymentId: string;
  amountMinor: number;
  reason: string;
  actorUserId: string;
  request?: Request;
}) {
  return db.transaction(async (tx) => {
    const [p] = await tx.select().from(payments).where(eq(payments.id, input.paymentId)).for("update");
    if (!p) throw new BillingError("There is no such payment.", { status: 404 });
    if (p.status !== "succeeded") throw new BillingError("Only a received payment can be refunded.", { status: 409 });
    const inv = await lockInvoice(tx, p.invoiceId);
    const left = p.amountMinor - p.refundedMinor;
    if (input.amountMinor > left)
      throw new BillingError(`At most ${formatMoney(left, p.currency)} of this payment can still be refunded.`, {
        status: 400,
        field: "amount",
      });
    let stripeRefundId: string | null = null;
    if (p.method === "card_online") {
      if (!p.stripePaymentIntentId)
        throw new BillingError("This online payment has no Stripe payment to refund.", { status: 409 });
      try {
        const r = await stripe().refunds.create(
          {
            payment_intent: p.stripePaymentIntentId,
            amount: input.amountMinor,
            metadata: { payment_id: p.id, invoice_id: inv.id },
          },
          { idempotencyKey: `refund-${p.id}-${p.refundedMinor}-${input.amountMinor}` },
        );
        stripeRefundId = r.id;
      } catch (error) {
        if (isStripeUnreachable(error))
          throw new BillingError("Stripe could not be reached, so nothing was refunded. Try again in a few minutes.", {
            status: 503,
          });
        throw new BillingError(`Stripe refused the refund: ${(error as Error).message}`, { status: 502 });
      }
    }
    const [r] = await tx
      .insert(refunds)
      .values({
        paymentId: p.id,
        amountMinor: input.amountMinor,
        reason: input.reason,
        stripeRefundId,
        createdById: input.actorUserId,
      })
      .returning({ id: refunds.id });
    await tx
      .update(payments)
      .set({ refundedMinor: p.refundedMinor + input.amountMinor, updatedAt: new Date() })
      .where(eq(payments.id, p.id));
    await applyPaid(tx, inv, -input.amountMinor);
    await audit(
      {
        action: "billing.refund_made",
        actorUserId: input.actorUserId,
        entityType: "refund",
        entityId: r!.id,
        patientId: inv.patientId,
        detail: { paymentId: p.id, amountMinor: input.amountMinor, reason: input.reason },
        request: input.request,
      },
      tx,
    );
    return { refundId: r!.id };
  });
}

/** Everything the invoice page and the PDFs show. */
export async function invoiceDetail(invoiceId: string) {
  const [inv] = await db
    .select({
      invoice: invoices,
      patient: {
        id: patients.id,
        firstName: patients.firstName,
        lastName: patients.lastName,
        email: patients.email,
        addressLine1: patients.addressLine1,
        city: patients.city,
        postcode: patients.postcode,
      },
    })
    .from(invoices)
    .innerJoin(patients, eq(patients.id, invoices.patientId))
    .where(eq(invoices.id, invoiceId));
  if (!inv) return null;
  const lines = await db
    .select()
    .from(invoiceLines)
    .where(eq(invoiceLines.invoiceId, invoiceId))
    .orderBy(asc(invoiceLines.position));
  const pays = await db
    .select()
    .from(payments)
    .where(eq(payments.invoiceId, invoiceId))
    .orderBy(asc(payments.createdAt));
  const refundRows = pays.length
    ? await db
        .select()
        .from(refunds)
        .where(
          inArray(
            refunds.paymentId,
            pays.map((p) => p.id),
          ),
        )
        .orderBy(asc(refunds.createdAt))
    : [];
  return { ...inv, lines, payments: pays, refunds: refundRows };
}

/** A payment's invoice and status (a receipt exists only for a succeeded payment); undefined when there is none. */
export async function paymentForReceipt(paymentId: string) {
  const [p] = await db
    .select({ invoiceId: payments.invoiceId, status: payments.status })
    .from(payments)
    .where(eq(payments.id, paymentId));
  return p;
}

export function throwNotFound(): never {
  notFound("There is no such invoice.");
}

/** An invoice for an exam belongs to the site of the exam's visit; any other to the default site. */
async function invoiceSite(tx: Tx, examId: string | null): Promise<string | undefined> {
  if (!examId) return undefined;
  const [row] = await tx
    .select({ siteId: appointments.siteId })
    .from(exams)
    .innerJoin(appointments, eq(appointments.id, exams.appointmentId))
    .where(eq(exams.id, examId));
  return row?.siteId;
}
