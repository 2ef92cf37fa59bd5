/**
 * Optical orders: building a spectacle or contact-lens order from a prescription, and moving it
 * through its states. Every move is one transaction: a conditional UPDATE (… WHERE state =
 * the state the person saw), an order_events row, and whatever the move causes (stock, e-mail
 * jobs). The database itself refuses a move not in order_transitions (trigger), so two people
 * marking the same order at once get one move and one clear refusal.
 */
import { and, asc, count, desc, eq, inArray, sql, type SQL } from "drizzle-orm";
import {
  feeItems,
  frames,
  invoices,
  labs,
  opticalOrders,
  orderChecks,
  orderEvents,
  orderMessages,
  patients,
  practiceSettings,
  prescriptionEyes,
  prescriptions,
  users,
} from "~/db/schema";
import type { OrderState } from "~/db/schema";
import { formatMoney } from "~/lib/format";
import { checkLensType, orderLabel, STATE_LABEL, type SpectacleLensType } from "~/lib/orders/states";
import {
  checkMountedPair,
  parseRx,
  RxError,
  type LensRx,
  type PairEye,
  type PairReport,
  type PrismComponents,
} from "~/lib/optics";
import { jurisdictionOf } from "~/lib/optics/jurisdiction";
import {
  BillingError,
  createInvoice,
  issueInvoice,
  recordDeskPayment,
  voidInvoice,
  type NewLine,
} from "~/models/billing/invoices.server";
import { searchCondition } from "~/models/patients/patients.server";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";
import type { SessionUser } from "~/utils/session.server";
import { queueOrderMessage, tryOrderMessageNow } from "./order-mail.server";
import { RELEASE_REASON_MESSAGE, RELEASE_REASON_MIN } from "./order-schema";
import { DomainError, type DomainErrorOptions } from "~/utils/failure.server";

export const ORDER_ROLES = ["owner", "optometrist", "receptionist"] as const;
/** Who may release spectacles that failed the check (a registered practitioner's decision). */
export const OVERRIDE_ROLES = ["owner", "optometrist"] as const;
export const RELEASE_ROLE_MESSAGE =
  "Only an optometrist or the practice owner can release spectacles that failed the check; send them for a remake or ask one of them.";

/** A refusal meant for the person; `field` names the form field it belongs to. */
/** A refused order rule; 409 unless said otherwise. */
export class OrderError extends DomainError {
  constructor(message: string, options: DomainErrorOptions = {}) {
    super(message, { status: 409, ...options });
  }
}

const isUndefinedOrNull = (x: unknown): x is null | undefined => x === null || x === undefined;

// ------------------------------------------------------------------------------------ reading

export async function practiceOrderSettings(conn: Tx | typeof db = db) {
  const [p] = await conn.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
  if (!p) throw new Error("practice settings are missing; run the seed");
  return { ...p, rules: jurisdictionOf(p.jurisdiction) };
}

async function prescriptionWithEyes(conn: Tx | typeof db, prescriptionId: string) {
  const [rx] = await conn.select().from(prescriptions).where(eq(prescriptions.id, prescriptionId));
  if (!rx) return null;
  const eyes = await conn.select().from(prescriptionEyes).where(eq(prescriptionEyes.prescriptionId, prescriptionId));
  return {
    ...rx,
    right: eyes.find((e) => e.eye === "right") ?? null,
    left: eyes.find((e) => e.eye === "left") ?? null,
  };
}
export type RxWithEyes = NonNullable<Awaited<ReturnType<typeof prescriptionWithEyes>>>;

/** The prescriptions an order can be built from: the patient's, newest first, with their expiry. */
export async function orderablePrescriptions(patientId: string) {
  const list = await db
    .select()
    .from(prescriptions)
    .where(eq(prescriptions.patientId, patientId))
    .orderBy(desc(prescriptions.issuedAt));
  const eyes = list.length
    ? await db
        .select()
        .from(prescriptionEyes)
        .where(
          inArray(
            prescriptionEyes.prescriptionId,
            list.map((p) => p.id),
          ),
        )
    : [];
  const today = new Date().toISOString().slice(0, 10);
  return list.map((p) => ({
    id: p.id,
    kind: p.kind,
    issuedAt: p.issuedAt.toISOString(),
    expiresOn: p.expiresOn,
    expired: p.expiresOn < today,
    lensName: p.lensName,
    prescriberName: p.prescriberName,
    eyes: eyes.filter((e) => e.prescriptionId === p.id).sort((a) => (a.eye === "right" ? -1 : 1)),
  }));
}

export async function activeFrames() {
  return db
    .select()
    .from(frames)
    .where(eq(frames.active, true))
    .orderBy(asc(frames.supplier), asc(frames.model), asc(frames.colour));
}
export async function activeLabs() {
  return db.select().from(labs).where(eq(labs.active, true)).orderBy(asc(labs.name));
}
export async function itemFees() {
  return db
    .select()
    .from(feeItems)
    .where(and(eq(feeItems.active, true), eq(feeItems.kind, "item")))
    .orderBy(asc(feeItems.code));
}

/** The patient an order is being built for (name and date of birth), or undefined if there is none. */
export async function orderPatient(patientId: string) {
  const [patient] = await db
    .select({
      id: patients.id,
      firstName: patients.firstName,
      lastName: patients.lastName,
      dateOfBirth: patients.dateOfBirth,
    })
    .from(patients)
    .where(eq(patients.id, patientId));
  return patient;
}

/** The invoice raised for an order, or undefined when it has none (yet). */
export async function orderInvoice(invoiceId: string | null) {
  if (!invoiceId) return undefined;
  const [inv] = await db.select().from(invoices).where(eq(invoices.id, invoiceId));
  return inv;
}

export async function orderDetail(orderId: string) {
  const [row] = await db
    .select({
      order: opticalOrders,
      patient: {
        id: patients.id,
        firstName: patients.firstName,
        lastName: patients.lastName,
        email: patients.email,
        dateOfBirth: patients.dateOfBirth,
      },
      lab: labs,
    })
    .from(opticalOrders)
    .innerJoin(patients, eq(patients.id, opticalOrders.patientId))
    .innerJoin(labs, eq(labs.id, opticalOrders.labId))
    .where(eq(opticalOrders.id, orderId));
  if (!row) return null;
  const rx = (await prescriptionWithEyes(db, row.order.prescriptionId))!;
  const events = await db
    .select({
      id: orderEvents.id,
      fromState: orderEvents.fromState,
      toState: orderEvents.toState,
      reason: orderEvents.reason,
      at: orderEvents.at,
      actor: users.name,
    })
    .from(orderEvents)
    .leftJoin(users, eq(users.id, orderEvents.actorUserId))
    .where(eq(orderEvents.orderId, orderId))
    .orderBy(asc(orderEvents.at));
  const checks = await db
    .select({
      id: orderChecks.id,
      standard: orderChecks.standard,
      readings: orderChecks.readings,
      report: orderChecks.report,
      pass: orderChecks.pass,
      at: orderChecks.at,
      by: users.name,
    })
    .from(orderChecks)
    .leftJoin(users, eq(users.id, orderChecks.checkedById))
    .where(eq(orderChecks.orderId, orderId))
    .orderBy(desc(orderChecks.at));
  const messages = await db
    .select()
    .from(orderMessages)
    .where(eq(orderMessages.orderId, orderId))
    .orderBy(asc(orderMessages.createdAt));
  const [fee] = row.order.lensFeeItemId
    ? await db.select().from(feeItems).where(eq(feeItems.id, row.order.lensFeeItemId))
    : [];
  return {
    ...row,
    rx,
    events,
    checks: checks.map((c) => ({ ...c, report: c.report as PairReport })),
    messages,
    lensFee: fee ?? null,
    label: orderLabel(row.order.number),
  };
}
export type OrderDetail = NonNullable<Awaited<ReturnType<typeof orderDetail>>>;

/** Columns the orders list sorts by, as they appear in the URL. */
export const ORDER_SORTS = ["label", "patientName", "labName", "state", "days"] as const;
export type OrderSort = (typeof ORDER_SORTS)[number];

export type OrderListQuery = {
  state?: OrderState | "open";
  patientId?: string;
  /** Words of the patient's name, phone or e-mail, or a date of birth (the patient search's rules). */
  q?: string;
  sort?: OrderSort | null;
  dir?: "asc" | "desc";
  page?: number;
  pageSize?: number;
};

/** One page of orders (newest first unless a column is chosen), with the number that match. */
export async function listOrders(filter: OrderListQuery = {}) {
  const where = and(
    filter.state === "open"
      ? sql`${opticalOrders.state} not in ('collected', 'cancelled')`
      : filter.state
        ? eq(opticalOrders.state, filter.state)
        : undefined,
    filter.patientId ? eq(opticalOrders.patientId, filter.patientId) : undefined,
    filter.q?.trim() ? (searchCondition(filter.q) ?? sql`false`) : undefined,
  );
  const pageSize = filter.pageSize ?? 25;
  const page = filter.page ?? 1;
  const dir = filter.dir === "desc" ? sql`desc` : sql`asc`;
  const key: Record<OrderSort, SQL[]> = {
    label: [sql`${opticalOrders.number}`],
    patientName: [sql`lower(${patients.firstName})`, sql`lower(${patients.lastName})`],
    labName: [sql`lower(${labs.name})`],
    state: [sql`${opticalOrders.state}::text`],
    // Days in the state: the longer, the earlier the change.
    days: [sql`${opticalOrders.stateChangedAt}`],
  };
  const order = filter.sort
    ? key[filter.sort].map((k) =>
        filter.sort === "days" ? sql`${k} ${filter.dir === "desc" ? sql`asc` : sql`desc`}` : sql`${k} ${dir}`,
      )
    : [];
  const [rows, [counted]] = await Promise.all([
    db
      .select({
        id: opticalOrders.id,
        number: opticalOrders.number,
        kind: opticalOrders.kind,
        state: opticalOrders.state,
        stateChangedAt: opticalOrders.stateChangedAt,
        createdAt: opticalOrders.createdAt,
        frameLabel: opticalOrders.frameLabel,
        patientId: patients.id,
        patientName: sql<string>`${patients.firstName} || ' ' || ${patients.lastName}`,
        labName: labs.name,
      })
      .from(opticalOrders)
      .innerJoin(patients, eq(patients.id, opticalOrders.patientId))
      .innerJoin(labs, eq(labs.id, opticalOrders.labId))
      .where(where)
      .orderBy(...order, desc(opticalOrders.createdAt), desc(opticalOrders.id))
      .limit(pageSize)
      .offset((page - 1) * pageSize),
    // Every order has its patient (a foreign key): the count joins patients only to search them.
    filter.q?.trim()
      ? db
          .select({ n: count() })
          .from(opticalOrders)
          .innerJoin(patients, eq(patients.id, opticalOrders.patientId))
          .where(where)
      : db.select({ n: count() }).from(opticalOrders).where(where),
  ]);
  return { rows, total: counted?.n ?? 0 };
}

// ------------------------------------------------------------------------------------ building

export type SpectacleOrderInput = {
  patientId: string;
  prescriptionId: string;
  labId: string;
  frameId: string;
  lensType: SpectacleLensType;
  lensMaterial: string;
  coatings: string[];
  tint: string;
  pdRightMm: number;
  pdLeftMm: number;
  heightRightMm: number | null;
  heightLeftMm: number | null;
  lensFeeItemId: string;
  notes: string;
};

export type ContactLensOrderInput = {
  patientId: string;
  prescriptionId: string;
  labId: string;
  boxesRight: number;
  boxesLeft: number;
  lensFeeItemId: string;
  notes: string;
};

async function checkCommon(
  tx: Tx,
  input: { patientId: string; prescriptionId: string; labId: string; lensFeeItemId: string },
  kind: "spectacle" | "contact_lens",
) {
  const rx = await prescriptionWithEyes(tx, input.prescriptionId);
  if (!rx || rx.patientId !== input.patientId)
    throw new OrderError("Choose one of this patient's prescriptions.", { status: 400, field: "prescriptionId" });
  if (rx.kind !== kind)
    throw new OrderError(
      kind === "spectacle"
        ? "A spectacle order needs a spectacle prescription."
        : "A contact-lens order needs a contact-lens prescription.",
      { status: 400, field: "prescriptionId" },
    );
  if (rx.expiresOn < new Date().toISOString().slice(0, 10))
    throw new OrderError(
      `This prescription expired on ${rx.expiresOn}; the patient needs a new exam before an order is made from it.`,
      { status: 400, field: "prescriptionId" },
    );
  const [lab] = await tx.select().from(labs).where(eq(labs.id, input.labId));
  if (!lab || !lab.active) throw new OrderError("Choose a lab from the list.", { status: 400, field: "labId" });
  const [fee] = await tx.select().from(feeItems).where(eq(feeItems.id, input.lensFeeItemId));
  if (!fee || !fee.active || fee.kind !== "item")
    throw new OrderError("Choose the lens price from the fee schedule.", { status: 400, field: "lensFeeItemId" });
  return { rx, lab, fee };
}

async function insertOrder(tx: Tx, user: SessionUser, values: typeof opticalOrders.$inferInsert) {
  const [o] = await tx
    .insert(opticalOrders)
    .values(values)
    .returning({ id: opticalOrders.id, number: opticalOrders.number, kind: opticalOrders.kind });
  await tx
    .insert(orderEvents)
    .values({ orderId: o!.id, kind: o!.kind, fromState: null, toState: "draft", actorUserId: user.id });
  return o!;
}

/** Raises and issues the order's invoice (frame at its stock price, lenses at the fee schedule's), then links it. */
async function raiseInvoice(
  user: SessionUser,
  orderId: string,
  patientId: string,
  lines: NewLine[],
  request?: Request,
) {
  try {
    const invoiceId = await createInvoice({ patientId, lines, actorUserId: user.id, request });
    await issueInvoice(invoiceId, user.id, request);
    await db.update(opticalOrders).set({ invoiceId }).where(eq(opticalOrders.id, orderId));
    return invoiceId;
  } catch (error) {
    if (error instanceof BillingError) return null; // the order stands; the invoice can be raised from the order page
    throw error;
  }
}

export function orderInvoiceLines(
  o: {
    kind: "spectacles" | "contact_lenses";
    frameLabel: string | null;
    framePriceMinor: number | null;
    boxesRight: number | null;
    boxesLeft: number | null;
    number: number;
  },
  fee: { id: string },
): NewLine[] {
  if (o.kind === "spectacles") {
    return [
      {
        custom: {
          description: `Frame: ${o.frameLabel} (order ${orderLabel(o.number)})`,
          unitPriceMinor: o.framePriceMinor ?? 0,
          taxCategory: "standard",
          kind: "item",
        },
        quantity: 1,
      },
      { feeItemId: fee.id, quantity: 1 },
    ];
  }
  return [{ feeItemId: fee.id, quantity: (o.boxesRight ?? 0) + (o.boxesLeft ?? 0) }];
}

/** Builds a spectacle order: takes the frame out of stock in the same transaction (refused when none is left). */
export async function createSpectacleOrder(user: SessionUser, input: SpectacleOrderInput, request?: Request) {
  const created = await db.transaction(async (tx) => {
    const { fee } = await checkCommon(tx, input, "spectacle");
    if (
      input.lensType !== "single_vision" &&
      (isUndefinedOrNull(input.heightRightMm) || isUndefinedOrNull(input.heightLeftMm))
    ) {
      throw new OrderError("Give both fitting heights: bifocal, varifocal and occupational lenses are made to them.", {
        status: 400,
        field: "heightRightMm",
      });
    }
    // Conditional decrement: the row lock it takes serialises two orders for the last frame.
    const [frame] = await tx
      .update(frames)
      .set({ quantity: sql`${frames.quantity} - 1` })
      .where(and(eq(frames.id, input.frameId), eq(frames.active, true), sql`${frames.quantity} > 0`))
      .returning();
    if (!frame) {
      const [exists] = await tx
        .select({ quantity: frames.quantity, active: frames.active })
        .from(frames)
        .where(eq(frames.id, input.frameId));
      throw new OrderError(
        exists?.active
          ? "That frame is out of stock. Choose another, or add stock in Settings → Frames."
          : "Choose a frame from the practice's stock.",
        { status: 409, field: "frameId" },
      );
    }
    const frameLabel = `${frame.supplier} ${frame.model}, ${frame.colour}, ${frame.size}`;
    const o = await insertOrder(tx, user, {
      kind: "spectacles",
      patientId: input.patientId,
      prescriptionId: input.prescriptionId,
      labId: input.labId,
      frameId: frame.id,
      frameLabel,
      framePriceMinor: frame.priceMinor,
      lensType: input.lensType,
      lensMaterial: input.lensMaterial,
      coatings: input.coatings,
      tint: input.tint,
      pdRightMm: input.pdRightMm,
      pdLeftMm: input.pdLeftMm,
      heightRightMm: input.heightRightMm,
      heightLeftMm: input.heightLeftMm,
      lensFeeItemId: fee.id,
      notes: input.notes,
      createdById: user.id,
    });
    await audit(
      {
        action: "order.created",
        actorUserId: user.id,
        entityType: "optical_order",
        entityId: o.id,
        patientId: input.patientId,
        detail: { kind: "spectacles", frameId: frame.id },
        request,
      },
      tx,
    );
    return {
      ...o,
      lines: orderInvoiceLines(
        {
          kind: "spectacles",
          frameLabel,
          framePriceMinor: frame.priceMinor,
          boxesRight: null,
          boxesLeft: null,
          number: o.number,
        },
        fee,
      ),
    };
  });
  const invoiceId = await raiseInvoice(user, created.id, input.patientId, created.lines, request);
  return { id: created.id, invoiceId };
}

export async function createContactLensOrder(user: SessionUser, input: ContactLensOrderInput, request?: Request) {
  const created = await db.transaction(async (tx) => {
    const { fee } = await checkCommon(tx, input, "contact_lens");
    if (input.boxesRight + input.boxesLeft <= 0)
      throw new OrderError("Order at least one box.", { status: 400, field: "boxesRight" });
    const o = await insertOrder(tx, user, {
      kind: "contact_lenses",
      patientId: input.patientId,
      prescriptionId: input.prescriptionId,
      labId: input.labId,
      boxesRight: input.boxesRight,
      boxesLeft: input.boxesLeft,
      lensFeeItemId: fee.id,
      notes: input.notes,
      createdById: user.id,
    });
    await audit(
      {
        action: "order.created",
        actorUserId: user.id,
        entityType: "optical_order",
        entityId: o.id,
        patientId: input.patientId,
        detail: { kind: "contact_lenses" },
        request,
      },
      tx,
    );
    return {
      ...o,
      lines: orderInvoiceLines(
        {
          kind: "contact_lenses",
          frameLabel: null,
          framePriceMinor: null,
          boxesRight: input.boxesRight,
          boxesLeft: input.boxesLeft,
          number: o.number,
        },
        fee,
      ),
    };
  });
  const invoiceId = await raiseInvoice(user, created.id, input.patientId, created.lines, request);
  return { id: created.id, invoiceId };
}

/** Raises the invoice of an order that has none (e.g. when raising it at order time was refused). */
export async function raiseOrderInvoice(user: SessionUser, orderId: string, request?: Request) {
  const d = await orderDetail(orderId);
  if (!d) throw new OrderError("There is no such order.", { status: 404 });
  if (d.order.invoiceId) throw new OrderError("This order already has an invoice.", { status: 409 });
  if (!d.lensFee)
    throw new OrderError("The lens price is no longer in the fee schedule; add it back first.", { status: 409 });
  const id = await raiseInvoice(user, orderId, d.order.patientId, orderInvoiceLines(d.order, d.lensFee), request);
  if (!id) throw new OrderError("The invoice could not be raised; check the fee schedule.", { status: 409 });
  return id;
}

// ------------------------------------------------------------------------------------ moving

type MoveOpts = {
  reason?: string;
  request?: Request;
  also?: (tx: Tx, order: typeof opticalOrders.$inferSelect) => Promise<void>;
};

/**
 * One move: UPDATE … WHERE id = ? AND state = expected. Nothing updated means someone else moved
 * the order first: the refusal says who and to what. The trigger refuses a move not allowed.
 */
async function move(user: SessionUser, orderId: string, expected: OrderState, to: OrderState, opts: MoveOpts = {}) {
  try {
    return await db.transaction(async (tx) => {
      const [o] = await tx
        .update(opticalOrders)
        .set({ state: to })
        .where(and(eq(opticalOrders.id, orderId), eq(opticalOrders.state, expected)))
        .returning();
      if (!o) {
        const [now] = await tx
          .select({ state: opticalOrders.state })
          .from(opticalOrders)
          .where(eq(opticalOrders.id, orderId));
        if (!now) throw new OrderError("There is no such order.", { status: 404 });
        const [last] = await tx
          .select({ at: orderEvents.at, actor: users.name })
          .from(orderEvents)
          .leftJoin(users, eq(users.id, orderEvents.actorUserId))
          .where(eq(orderEvents.orderId, orderId))
          .orderBy(desc(orderEvents.at))
          .limit(1);
        const by = last?.actor ? ` by ${last.actor}` : "";
        const at = last ? ` at ${last.at.toISOString().slice(11, 16)} UTC` : "";
        throw new OrderError(
          `This order was already marked "${STATE_LABEL[now.state]}"${by}${at}, so it was not marked "${STATE_LABEL[to]}". The page now shows where it stands.`,
          { status: 409 },
        );
      }
      await tx.insert(orderEvents).values({
        orderId,
        kind: o.kind,
        fromState: expected,
        toState: to,
        actorUserId: user.id,
        reason: opts.reason ?? "",
      });
      if (opts.also) await opts.also(tx, o);
      await audit(
        {
          action: `order.${to}`,
          actorUserId: user.id,
          entityType: "optical_order",
          entityId: orderId,
          patientId: o.patientId,
          detail: { from: expected, reason: opts.reason ?? null },
          request: opts.request,
        },
        tx,
      );
      return o;
    });
  } catch (error) {
    const e = error as { code?: string; constraint?: string; cause?: { code?: string; constraint?: string } };
    const code = e.code ?? e.cause?.code;
    const constraint = e.constraint ?? e.cause?.constraint;
    if (code === "23514" && constraint === "optical_orders_state_transition") {
      throw new OrderError(`An order cannot go from "${STATE_LABEL[expected]}" to "${STATE_LABEL[to]}".`, {
        status: 409,
      });
    }
    throw error;
  }
}

export async function sendToLab(user: SessionUser, orderId: string, expected: OrderState, request?: Request) {
  if (expected !== "draft" && expected !== "remake")
    throw new OrderError("Only a draft or a remake is sent to the lab.", { status: 409 });
  let messageId = "";
  await move(user, orderId, expected, "sent_to_lab", {
    request,
    also: async (tx, o) => {
      const [lab] = await tx.select().from(labs).where(eq(labs.id, o.labId));
      if (!lab?.email)
        throw new OrderError("The lab has no e-mail address; add one in Settings → Labs.", { status: 409 });
      messageId = await queueOrderMessage(tx, orderId, "lab_order", lab.email);
    },
  });
  await tryOrderMessageNow(messageId);
}

export const markReceived = (user: SessionUser, orderId: string, request?: Request) =>
  move(user, orderId, "sent_to_lab", "received", { request });

export type EyeReading = {
  rx: string;
  add: string;
  horizontalPrism: number;
  horizontalBase: "in" | "out" | "";
  verticalPrism: number;
  verticalBase: "up" | "down" | "";
  pdMm: number | null;
  heightMm: number | null;
};

function orderedPrism(eye: RxWithEyes["right"]): PrismComponents {
  if (!eye?.prismDioptres || !eye.prismBase)
    return { horizontal: 0, horizontalBase: null, vertical: 0, verticalBase: null };
  const horizontal = eye.prismBase === "in" || eye.prismBase === "out";
  return horizontal
    ? { horizontal: eye.prismDioptres, horizontalBase: eye.prismBase as "in" | "out", vertical: 0, verticalBase: null }
    : {
        horizontal: 0,
        horizontalBase: null,
        vertical: eye.prismDioptres,
        verticalBase: eye.prismBase as "up" | "down",
      };
}

function orderedLens(eye: NonNullable<RxWithEyes["right"]>): LensRx {
  return eye.addPower
    ? { sphere: eye.sphere, cylinder: eye.cylinder, axis: eye.axis, add: eye.addPower }
    : { sphere: eye.sphere, cylinder: eye.cylinder, axis: eye.axis };
}

/**
 * Reads the typed lensmeter values with the optics engine and runs the practice's dispensing
 * standard on the pair. A bad reading is refused with the field it belongs to.
 */
export function runCheck(
  detail: Pick<OrderDetail, "rx" | "order">,
  readings: { right: EyeReading; left: EyeReading },
  standard: PairReport["standard"],
): PairReport {
  const eyes = {} as Record<"right" | "left", PairEye>;
  for (const side of ["right", "left"] as const) {
    const ordered = detail.rx[side];
    if (!ordered) throw new OrderError(`The prescription has no ${side} eye.`, { status: 409 });
    const r = readings[side];
    let measured: LensRx;
    try {
      measured = parseRx(r.rx);
    } catch (error) {
      if (error instanceof RxError)
        throw new OrderError(
          `${side === "right" ? "Right" : "Left"} reading: ${error.message}. Type it as sphere, cylinder and axis, e.g. -2.25 -0.75 x 175.`,
          { status: 400, field: `${side}.rx` },
        );
      throw error;
    }
    if (ordered.addPower) {
      const add = Number(r.add.replace(/^\+/, ""));
      if (!r.add.trim() || !Number.isFinite(add) || add <= 0 || add > 4.5)
        throw new OrderError(
          `${side === "right" ? "Right" : "Left"} add: an add of ${ordered.addPower.toFixed(2)} was ordered; type the add read on the lensmeter, e.g. +2.00.`,
          { status: 400, field: `${side}.add` },
        );
      measured = { ...measured, add };
    }
    eyes[side] = {
      ordered: orderedLens(ordered),
      measured,
      orderedPrism: orderedPrism(ordered),
      measuredPrism: {
        horizontal: r.horizontalPrism,
        horizontalBase: r.horizontalPrism ? ((r.horizontalBase || null) as "in" | "out" | null) : null,
        vertical: r.verticalPrism,
        verticalBase: r.verticalPrism ? ((r.verticalBase || null) as "up" | "down" | null) : null,
      },
      orderedPdMm: side === "right" ? detail.order.pdRightMm : detail.order.pdLeftMm,
      orderedHeightMm: side === "right" ? detail.order.heightRightMm : detail.order.heightLeftMm,
      measuredPdMm: r.pdMm,
      measuredHeightMm: r.heightMm,
    };
  }
  try {
    return checkMountedPair(eyes.right, eyes.left, {
      standard,
      lensType: checkLensType(detail.order.lensType ?? "single_vision"),
    });
  } catch (error) {
    if (error instanceof RxError) throw new OrderError(`${error.message}.`, { status: 400 });
    throw error;
  }
}

/** Received → checked, with the lensmeter readings and the report kept whatever the result. */
export async function recordCheck(
  user: SessionUser,
  orderId: string,
  readings: { right: EyeReading; left: EyeReading },
  request?: Request,
) {
  const d = await orderDetail(orderId);
  if (!d) throw new OrderError("There is no such order.", { status: 404 });
  if (d.order.kind !== "spectacles")
    throw new OrderError("Contact lenses are not checked on the lensmeter.", { status: 409 });
  const settings = await practiceOrderSettings();
  const report = runCheck(d, readings, settings.rules.dispensingStandard);
  await move(user, orderId, "received", "checked", {
    request,
    reason: report.pass ? "Passed" : "Failed",
    also: async (tx) => {
      await tx
        .insert(orderChecks)
        .values({ orderId, standard: report.standard, readings, report, pass: report.pass, checkedById: user.id });
    },
  });
  return report;
}

/** Checked (or received, for contact lenses) → ready to collect; e-mails the patient if they accept e-mails. */
export async function markReady(user: SessionUser, orderId: string, expected: OrderState, request?: Request) {
  await toReady(user, orderId, expected, null, request);
}

/**
 * Releases spectacles whose last check failed: checked → ready to collect, with the reason kept on
 * the order, in its history and in the audit log. Only an optometrist or the owner may (the
 * practitioner who releases takes responsibility for it under local rules); the reason is required.
 */
export async function releaseFailedCheck(user: SessionUser, orderId: string, reason: string, request?: Request) {
  if (!(OVERRIDE_ROLES as readonly string[]).includes(user.role))
    throw new OrderError(RELEASE_ROLE_MESSAGE, { status: 403 });
  const why = reason.trim();
  if (why.length < RELEASE_REASON_MIN) throw new OrderError(RELEASE_REASON_MESSAGE, { status: 400, field: "reason" });
  await toReady(user, orderId, "checked", why, request);
}

async function toReady(
  user: SessionUser,
  orderId: string,
  expected: OrderState,
  releaseReason: string | null,
  request?: Request,
) {
  let messageId = "";
  await move(user, orderId, expected, "ready_to_collect", {
    request,
    reason: releaseReason ? `Released despite a failed check: ${releaseReason}` : "",
    also: async (tx, o) => {
      if (o.kind === "spectacles") {
        const [last] = await tx
          .select({ id: orderChecks.id, pass: orderChecks.pass, standard: orderChecks.standard })
          .from(orderChecks)
          .where(eq(orderChecks.orderId, orderId))
          .orderBy(desc(orderChecks.at))
          .limit(1);
        if (!last) throw new OrderError("Check the spectacles on the lensmeter first.", { status: 409 });
        if (!last.pass && releaseReason === null)
          throw new OrderError(
            "These spectacles failed the check. Send them for a remake, or an optometrist or the owner may release them with a reason.",
            { status: 409 },
          );
        if (last.pass && releaseReason !== null)
          throw new OrderError("These spectacles passed the check; mark them ready to collect instead.", {
            status: 409,
          });
        if (releaseReason !== null) {
          await tx.update(opticalOrders).set({ overrideReason: releaseReason }).where(eq(opticalOrders.id, orderId));
          await audit(
            {
              action: "order.check_released",
              actorUserId: user.id,
              entityType: "optical_order",
              entityId: orderId,
              patientId: o.patientId,
              detail: { checkId: last.id, standard: last.standard, reason: releaseReason },
              request,
            },
            tx,
          );
        }
      } else if (releaseReason !== null) {
        throw new OrderError("Contact lenses are not checked on the lensmeter, so there is nothing to release.", {
          status: 409,
        });
      }
      messageId = await queueOrderMessage(tx, orderId, "patient_ready", null);
    },
  });
  await tryOrderMessageNow(messageId);
}

export async function markRemake(
  user: SessionUser,
  orderId: string,
  expected: OrderState,
  reason: string,
  request?: Request,
) {
  if (reason.trim().length < 3)
    throw new OrderError("Say why the order is being remade (for example: axis out of tolerance).", {
      status: 400,
      field: "reason",
    });
  await move(user, orderId, expected, "remake", { request, reason: reason.trim() });
}

/** Cancels: the frame goes back into stock in the same transaction; an unpaid invoice is voided. */
export async function cancelOrder(
  user: SessionUser,
  orderId: string,
  expected: OrderState,
  reason: string,
  request?: Request,
) {
  if (reason.trim().length < 3)
    throw new OrderError("Say why the order is cancelled.", { status: 400, field: "reason" });
  const o = await move(user, orderId, expected, "cancelled", {
    request,
    reason: reason.trim(),
    also: async (tx, order) => {
      if (order.frameId)
        await tx
          .update(frames)
          .set({ quantity: sql`${frames.quantity} + 1` })
          .where(eq(frames.id, order.frameId));
    },
  });
  if (o.invoiceId) {
    try {
      await voidInvoice(o.invoiceId, `Order ${orderLabel(o.number)} cancelled: ${reason.trim()}`, user.id, request);
    } catch (error) {
      if (error instanceof BillingError) return { invoiceNote: `The invoice was not voided: ${error.message}` };
      throw error;
    }
  }
  return { invoiceNote: null };
}

/** Ready → collected; the balance of the order's invoice may be taken in the same step. */
export async function collectOrder(
  user: SessionUser,
  orderId: string,
  payment: { method: "cash" | "card_desk"; amountMinor: number; reference: string } | null,
  request?: Request,
) {
  const [o] = await db.select().from(opticalOrders).where(eq(opticalOrders.id, orderId));
  if (!o) throw new OrderError("There is no such order.", { status: 404 });
  if (o.state !== "ready_to_collect")
    throw new OrderError(`This order is "${STATE_LABEL[o.state]}", not ready to collect.`, { status: 409 });
  if (payment && payment.amountMinor > 0) {
    if (!o.invoiceId) throw new OrderError("This order has no invoice to pay.", { status: 409 });
    try {
      await recordDeskPayment({
        invoiceId: o.invoiceId,
        method: payment.method,
        amountMinor: payment.amountMinor,
        reference: payment.reference,
        actorUserId: user.id,
        request,
      });
    } catch (error) {
      if (error instanceof BillingError) throw new OrderError(error.message, { status: 400, field: "amount" });
      throw error;
    }
  }
  await move(user, orderId, "ready_to_collect", "collected", { request });
}

export function describeMoney(minor: number, currency: string) {
  return formatMoney(minor, currency);
}
