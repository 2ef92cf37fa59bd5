import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { and, eq, sql } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import {
  auditLog,
  exams,
  feeItems,
  frames,
  invoices,
  labs,
  opticalOrders,
  orderChecks,
  orderMessages,
  patients,
  prescriptionEyes,
  prescriptions,
  users,
} from "~/db/schema";
import {
  cancelOrder,
  collectOrder,
  createSpectacleOrder,
  markReady,
  markReceived,
  markRemake,
  OrderError,
  recordCheck,
  releaseFailedCheck,
  sendToLab,
  type EyeReading,
} from "~/models/orders/orders.server";
import { RELEASE_REASON_MESSAGE } from "~/models/orders/order-schema";
import { loader as newOrderLoader } from "~/routes/orders/new";
import { action as orderAction, loader as orderLoader } from "~/routes/orders/order";
import { loader as portalOrdersLoader } from "~/routes/portal/orders";
import { db } from "~/utils/db.server";
import { getSessionUser } from "~/utils/session.server";
import {
  cookieFor,
  dataOf,
  mailTo,
  makeRequest,
  run,
  statusOf,
  uniqueEmail,
  userByEmail,
} from "#tests/support/helpers";
import { UNIT } from "#tests/support/ports";

const uniq = () => Math.random().toString(36).slice(2, 8);
const as = async (role: string) => (await getSessionUser(makeRequest("/", { cookie: await cookieFor(role) })))!;

async function fixture(opts: { quantity?: number; remindersByEmail?: boolean } = {}) {
  const optom = await userByEmail("optometrist@dioptra-demo.test");
  const email = uniqueEmail("orderpt");
  const [p] = await db
    .insert(patients)
    .values({
      firstName: "Order",
      lastName: `Holder${uniq()}`,
      dateOfBirth: "1975-03-04",
      email,
      remindersByEmail: opts.remindersByEmail ?? true,
    })
    .returning();
  const [exam] = await db
    .insert(exams)
    .values({ patientId: p!.id, optometristId: optom.id, status: "signed", signedAt: new Date(), signedById: optom.id })
    .returning();
  const [rx] = await db
    .insert(prescriptions)
    .values({
      patientId: p!.id,
      examId: exam!.id,
      kind: "spectacle",
      issuedById: optom.id,
      expiresOn: "2099-01-01",
      prescriberName: optom.name,
      prescriberLicence: "01-12345",
    })
    .returning();
  await db.insert(prescriptionEyes).values([
    { prescriptionId: rx!.id, eye: "right", sphere: -2, cylinder: -1, axis: 90 },
    { prescriptionId: rx!.id, eye: "left", sphere: -2.5, cylinder: -0.5, axis: 80 },
  ]);
  const [frame] = await db
    .insert(frames)
    .values({
      supplier: "Test Frames",
      model: `T${uniq()}`,
      colour: "Slate",
      size: "52-18-140",
      priceMinor: 9000,
      quantity: opts.quantity ?? 2,
    })
    .returning();
  const labEmail = uniqueEmail("lab");
  const [lab] = await db
    .insert(labs)
    .values({ name: `Lab ${uniq()}`, email: labEmail })
    .returning();
  const [fee] = await db.select().from(feeItems).where(eq(feeItems.code, "LN-SV"));
  const input = {
    patientId: p!.id,
    prescriptionId: rx!.id,
    labId: lab!.id,
    frameId: frame!.id,
    lensType: "single_vision" as const,
    lensMaterial: "Mid index 1.60",
    coatings: ["Anti-reflection"],
    tint: "",
    pdRightMm: 32,
    pdLeftMm: 31.5,
    heightRightMm: null,
    heightLeftMm: null,
    lensFeeItemId: fee!.id,
    notes: "",
  };
  return { patient: p!, rx: rx!, frame: frame!, lab: lab!, input, email, labEmail };
}

const reading = (rx: string): EyeReading => ({
  rx,
  add: "",
  horizontalPrism: 0,
  horizontalBase: "",
  verticalPrism: 0,
  verticalBase: "",
  pdMm: null,
  heightMm: null,
});
const stock = async (id: string) =>
  (await db.select({ q: frames.quantity }).from(frames).where(eq(frames.id, id)))[0]!.q;
const stateOf = async (id: string) =>
  (await db.select({ s: opticalOrders.state }).from(opticalOrders).where(eq(opticalOrders.id, id)))[0]!.s;

function pdfText(bytes: ArrayBuffer) {
  const dir = mkdtempSync(join(tmpdir(), "order-pdf-"));
  const file = join(dir, "order.pdf");
  writeFileSync(file, Buffer.from(bytes));
  return execFileSync("pdftotext", ["-layout", file, "-"]).toString();
}

describe("spectacle orders", () => {
  it("take the frame out of stock, raise an issued invoice at stock and fee-schedule prices, and refuse an empty shelf", async () => {
    const f = await fixture({ quantity: 1 });
    const desk = await as("receptionist");
    const { id, invoiceId } = await createSpectacleOrder(desk, f.input);
    expect(await stock(f.frame.id)).toBe(0);
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, invoiceId!));
    // 90.00 frame + 60.00 lenses (LN-SV), both standard-rated at the demo practice's rate.
    expect(inv).toMatchObject({ status: "open", subtotalMinor: 15000 });
    await expect(createSpectacleOrder(desk, f.input)).rejects.toThrow(/out of stock/);
    expect(await stock(f.frame.id)).toBe(0);
    await cancelOrder(desk, id, "draft", "Patient changed their mind");
    expect(await stock(f.frame.id)).toBe(1);
    expect((await db.select().from(invoices).where(eq(invoices.id, invoiceId!)))[0]!.status).toBe("void");
  });

  it("two orders for the last frame at once: one gets it, the other is told it is out of stock", async () => {
    const f = await fixture({ quantity: 1 });
    const desk = await as("receptionist");
    const results = await Promise.allSettled([
      createSpectacleOrder(desk, f.input),
      createSpectacleOrder(desk, f.input),
    ]);
    expect(results.filter((r) => r.status === "fulfilled")).toHaveLength(1);
    const refused = results.find((r) => r.status === "rejected") as PromiseRejectedResult;
    expect(refused.reason).toBeInstanceOf(OrderError);
    expect(await stock(f.frame.id)).toBe(0);
  });

  it("refuses heights missing for varifocals and an expired prescription", async () => {
    const f = await fixture();
    const desk = await as("receptionist");
    await expect(createSpectacleOrder(desk, { ...f.input, lensType: "varifocal" })).rejects.toThrow(/fitting heights/);
    await db.update(prescriptions).set({ expiresOn: "2001-01-01" }).where(eq(prescriptions.id, f.rx.id));
    await expect(createSpectacleOrder(desk, f.input)).rejects.toThrow(/expired/);
    expect(await stock(f.frame.id)).toBe(2);
  });

  it("the database refuses a skipped step, whatever the code does", async () => {
    const f = await fixture();
    const { id } = await createSpectacleOrder(await as("receptionist"), f.input);
    await expect(db.execute(sql`update optical_orders set state = 'collected' where id = ${id}`)).rejects.toThrow();
    expect(await stateOf(id)).toBe("draft");
  });

  it("two people marking the same order at once: one move, one clear refusal", async () => {
    const f = await fixture();
    const desk = await as("receptionist");
    const optom = await as("optometrist");
    const { id } = await createSpectacleOrder(desk, f.input);
    await sendToLab(desk, id, "draft");
    const results = await Promise.allSettled([markReceived(desk, id), markReceived(optom, id)]);
    expect(results.filter((r) => r.status === "fulfilled")).toHaveLength(1);
    const refused = results.find((r) => r.status === "rejected") as PromiseRejectedResult;
    expect((refused.reason as Error).message).toMatch(/already marked "Received from lab"/);
    const events = await db.execute(sql`select to_state from order_events where order_id = ${id} order by at`);
    expect(events.rows.map((r) => r.to_state)).toEqual(["draft", "sent_to_lab", "received"]);
  });

  it("walks lab, check, remake and collection; e-mails the lab the order PDF and the patient when ready", async () => {
    const f = await fixture();
    const desk = await as("receptionist");
    const optom = await as("optometrist");
    const { id, invoiceId } = await createSpectacleOrder(desk, f.input);
    await sendToLab(desk, id, "draft");
    const labMail = await mailTo(f.labEmail);
    expect(labMail).toHaveLength(1);
    expect(labMail[0]!.attachments[0]!.filename).toMatch(/^order-ORD-\d{5}\.pdf$/);
    const pdf = await (
      await fetch(`http://127.0.0.1:${UNIT.mailApi}/messages/${labMail[0]!.id}/attachments/0`)
    ).arrayBuffer();
    const text = pdfText(pdf);
    expect(text).toMatch(/Spectacle order ORD-\d{5}/);
    expect(text).toContain("Mid index 1.60");
    expect(text).toMatch(/Right\s+-2\.00\s+-1\.00\s+090/);
    expect(text).toContain("32.0 mm");

    await markReceived(desk, id);
    // Ordered −1.00 × 90: the axis tolerance is ±4° under ISO 21987 (from memory, published summaries), ±3° under ANSI.
    await expect(
      recordCheck(desk, id, { right: reading("-2.00 -1.00 x"), left: reading("-2.50 -0.50 x 80") }),
    ).rejects.toThrow(/Right reading/);
    expect(await stateOf(id)).toBe("received");
    const failed = await recordCheck(desk, id, {
      right: reading("-2.00 -1.00 x 100"),
      left: reading("-2.50 -0.50 x 80"),
    });
    expect(failed.pass).toBe(false);
    expect(failed.right.checks.find((c) => c.element === "axis")).toMatchObject({ difference: 10, pass: false });
    await expect(markReady(desk, id, "checked")).rejects.toThrow(/failed the check/);
    await expect(markReady(optom, id, "checked")).rejects.toThrow(/failed the check/);
    await expect(releaseFailedCheck(desk, id, "Looks fine")).rejects.toMatchObject({ status: 403 });
    await expect(releaseFailedCheck(optom, id, "  ")).rejects.toMatchObject({ status: 400, field: "reason" });
    expect(await stateOf(id)).toBe("checked");
    await markRemake(desk, id, "checked", "Right axis 10 degrees out");
    await sendToLab(desk, id, "remake");
    expect((await mailTo(f.labEmail))[0]!.subject).toMatch(/^Remake: /);
    await markReceived(desk, id);
    const passed = await recordCheck(desk, id, {
      right: reading("-2.00 -1.00 x 91"),
      left: reading("-2.50 -0.50 x 80"),
    });
    expect(passed.pass).toBe(true);
    await expect(releaseFailedCheck(optom, id, "Nothing to release here")).rejects.toThrow(/passed the check/);
    await markReady(desk, id, "checked");
    const ready = await mailTo(f.email);
    expect(ready[0]!.subject).toMatch(/ready to collect/);
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, invoiceId!));
    await expect(
      collectOrder(desk, id, { method: "cash", amountMinor: inv!.totalMinor + 1, reference: "" }),
    ).rejects.toThrow(/more than the amount due/);
    expect(await stateOf(id)).toBe("ready_to_collect");
    await collectOrder(desk, id, { method: "card_desk", amountMinor: inv!.totalMinor, reference: "" });
    expect(await stateOf(id)).toBe("collected");
    expect((await db.select().from(invoices).where(eq(invoices.id, invoiceId!)))[0]!.status).toBe("paid");
    expect(await db.select().from(orderChecks).where(eq(orderChecks.orderId, id))).toHaveLength(2);
  });

  it("an optometrist may release failed spectacles with a reason; a patient who turned e-mails off is not e-mailed", async () => {
    const f = await fixture({ remindersByEmail: false });
    const desk = await as("receptionist");
    const { id } = await createSpectacleOrder(desk, f.input);
    await sendToLab(desk, id, "draft");
    await markReceived(desk, id);
    await recordCheck(desk, id, { right: reading("-2.25 -1.00 x 90"), left: reading("-2.50 -0.50 x 80") });
    await releaseFailedCheck(
      await as("optometrist"),
      id,
      "Sphere 0.25 D over; patient's habitual lenses identical, agreed with patient",
    );
    const [o] = await db.select().from(opticalOrders).where(eq(opticalOrders.id, id));
    expect(o!.overrideReason).toMatch(/habitual/);
    const msgs = await db.select().from(orderMessages).where(eq(orderMessages.orderId, id));
    expect(msgs.find((m) => m.kind === "patient_ready")).toMatchObject({
      status: "skipped",
      skippedReason: "patient has turned e-mails off",
    });
    expect(await mailTo(f.email)).toHaveLength(0);
  });
});

describe("releasing spectacles that failed the check, at the order page", () => {
  /** An order whose lensmeter check failed: right sphere 0.25 D over the ordered −2.00 D. */
  async function failedOrder() {
    const f = await fixture();
    const desk = await as("receptionist");
    const { id } = await createSpectacleOrder(desk, f.input);
    await sendToLab(desk, id, "draft");
    await markReceived(desk, id);
    // Ordered −2.00 −1.00 × 90: ±0.12 D on each principal meridian up to 3.00 D under BS EN ISO 21987
    // (from memory, published summaries of its table, as in app/lib/optics/dispensing.ts).
    const report = await recordCheck(desk, id, {
      right: reading("-2.25 -1.00 x 90"),
      left: reading("-2.50 -0.50 x 80"),
    });
    expect(report.pass).toBe(false);
    return { ...f, id };
  }
  const post = async (role: string, id: string, form: Record<string, string>) =>
    run(orderAction, makeRequest(`/orders/${id}`, { cookie: await cookieFor(role), form }), { orderId: id });

  it("refuses a receptionist with 403, whatever the reason says, and moves nothing", async () => {
    const f = await failedOrder();
    const result = await post("receptionist", f.id, {
      intent: "release",
      expected: "checked",
      reason: "Patient is happy with them",
    });
    expect(statusOf(result)).toBe(403);
    expect(dataOf<{ message: string }>(result).message).toMatch(/Only an optometrist or the practice owner/);
    expect(await stateOf(f.id)).toBe("checked");
    const page = dataOf<{ canOverride: boolean }>(
      await run(orderLoader, makeRequest(`/orders/${f.id}`, { cookie: await cookieFor("receptionist") }), {
        orderId: f.id,
      }),
    );
    expect(page.canOverride).toBe(false);
  });

  it("refuses an empty reason with 400 and the field's message, then records the release with who, when and why", async () => {
    const f = await failedOrder();
    const empty = await post("optometrist", f.id, { intent: "release", expected: "checked", reason: "   " });
    expect(statusOf(empty)).toBe(400);
    expect(dataOf<{ fieldErrors: Record<string, string[]> }>(empty).fieldErrors.reason).toEqual([
      RELEASE_REASON_MESSAGE,
    ]);
    expect(await stateOf(f.id)).toBe("checked");
    // Marking it ready without releasing is refused too.
    const plain = await post("optometrist", f.id, { intent: "ready", expected: "checked" });
    expect(statusOf(plain)).toBe(409);
    expect(dataOf<{ message: string }>(plain).message).toMatch(/failed the check/);

    const before = Date.now();
    const done = await post("optometrist", f.id, {
      intent: "release",
      expected: "checked",
      reason: "Right sphere 0.25 D over; matches the habitual pair, agreed with the patient",
    });
    expect(statusOf(done)).toBe(302);
    expect(await stateOf(f.id)).toBe("ready_to_collect");
    const optom = await userByEmail("optometrist@dioptra-demo.test");
    const [o] = await db.select().from(opticalOrders).where(eq(opticalOrders.id, f.id));
    expect(o!.overrideReason).toBe("Right sphere 0.25 D over; matches the habitual pair, agreed with the patient");
    const events = await db.execute<{ to_state: string; actor_user_id: string; reason: string; at: Date }>(
      sql`select to_state, actor_user_id, reason, at from order_events where order_id = ${f.id} order by at desc limit 1`,
    );
    const last = events.rows[0]!;
    expect(last).toMatchObject({
      to_state: "ready_to_collect",
      actor_user_id: optom.id,
      reason:
        "Released despite a failed check: Right sphere 0.25 D over; matches the habitual pair, agreed with the patient",
    });
    expect(new Date(last.at).getTime()).toBeGreaterThanOrEqual(before - 1000);
    const [audited] = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "order.check_released"), eq(auditLog.entityId, f.id)));
    expect(audited).toMatchObject({ actorUserId: optom.id, patientId: f.patient.id });
    expect(audited!.detail).toMatchObject({
      standard: "BS EN ISO 21987:2017",
      reason: "Right sphere 0.25 D over; matches the habitual pair, agreed with the patient",
    });
    // The order page's history names who released it and why.
    const page = dataOf<{ events: { toState: string; actor: string | null; reason: string }[] }>(
      await run(orderLoader, makeRequest(`/orders/${f.id}`, { cookie: await cookieFor("optometrist") }), {
        orderId: f.id,
      }),
    );
    expect(page.events.at(-1)).toMatchObject({ toState: "ready_to_collect", actor: optom.name });
    expect(page.events.at(-1)!.reason).toMatch(/^Released despite a failed check: /);
  });
});

describe("where an order is started and where the patient follows it", () => {
  it("the new-order page names the chosen patient and offers their prescriptions; an unknown patient is 404", async () => {
    const f = await fixture();
    const cookie = await cookieFor("receptionist");
    const page = dataOf<{
      step: string;
      patient: { id: string; firstName: string; lastName: string; dateOfBirth: string };
      prescriptions: { id: string }[];
    }>(await run(newOrderLoader, makeRequest(`/orders/new?patientId=${f.patient.id}`, { cookie })));
    expect(page.step).toBe("prescription");
    expect(page.patient).toEqual({
      id: f.patient.id,
      firstName: "Order",
      lastName: f.patient.lastName,
      dateOfBirth: "1975-03-04",
    });
    expect(page.prescriptions.map((r) => r.id)).toEqual([f.rx.id]);
    const form = dataOf<{ step: string; rx: { id: string } | null }>(
      await run(
        newOrderLoader,
        makeRequest(`/orders/new?patientId=${f.patient.id}&prescriptionId=${f.rx.id}`, { cookie }),
      ),
    );
    expect(form.step).toBe("form");
    expect(form.rx?.id).toBe(f.rx.id);
    const nobody = "00000000-0000-4000-8000-000000000000";
    expect(statusOf(await run(newOrderLoader, makeRequest(`/orders/new?patientId=${nobody}`, { cookie })))).toBe(404);
  });

  it("the order page shows the invoice raised with the order", async () => {
    const f = await fixture();
    const { id, invoiceId } = await createSpectacleOrder(await as("receptionist"), f.input);
    const page = dataOf<{ invoice: { id: string; status: string; totalMinor: number } | null }>(
      await run(orderLoader, makeRequest(`/orders/${id}`, { cookie: await cookieFor("receptionist") }), {
        orderId: id,
      }),
    );
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, invoiceId!));
    expect(page.invoice).toMatchObject({ id: invoiceId, status: "open", totalMinor: inv!.totalMinor });
  });

  it("the portal lists the signed-in patient's own orders, newest first, and records the reading", async () => {
    const mine = await fixture();
    const theirs = await fixture();
    const desk = await as("receptionist");
    const first = await createSpectacleOrder(desk, mine.input);
    const second = await createSpectacleOrder(desk, { ...mine.input, lensMaterial: "Standard index 1.50" });
    await createSpectacleOrder(desk, theirs.input);
    const [account] = await db
      .insert(users)
      .values({ email: mine.email, name: "Order Holder", role: "patient", patientId: mine.patient.id })
      .returning();
    const page = dataOf<{ orders: { id: string; kind: string; state: string; frameLabel: string | null }[] }>(
      await run(portalOrdersLoader, makeRequest("/portal/orders", { cookie: await cookieFor(mine.email) })),
    );
    expect(page.orders.map((o) => o.id)).toEqual([second.id, first.id]);
    expect(page.orders[0]).toMatchObject({ kind: "spectacles", state: "draft" });
    expect(page.orders[0]!.frameLabel).toContain(mine.frame.model);
    const read = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "portal.orders_read"), eq(auditLog.actorUserId, account!.id)));
    expect(read).toHaveLength(1);
    expect(read[0]!.patientId).toBe(mine.patient.id);
  });
});
