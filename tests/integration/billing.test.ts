import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { eq, inArray } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import { action as invoiceAction, loader as invoiceLoader } from "~/routes/billing/invoice";
import { action as newInvoiceAction, loader as newInvoiceLoader } from "~/routes/billing/invoice-new";
import { loader as invoicePdfLoader } from "~/routes/billing/invoice-pdf";
import { loader as receiptPdfLoader } from "~/routes/billing/receipt-pdf";
import { loader as listLoader } from "~/routes/billing/index";
import { loader as takingsLoader } from "~/routes/billing/takings";
import { loader as takingsCsvLoader } from "~/routes/billing/takings-csv";
import { createInvoice, issueInvoice, recordDeskPayment, refundPayment } from "~/models/billing/invoices.server";
import { action as feesAction } from "~/routes/settings/fees";
import { auditLog, feeItems, invoiceLines, invoices, payments, practiceSettings } from "~/db/schema";
import { db } from "~/utils/db.server";
import { cookieFor, dataOf, mailTo, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";
import { fee, finishedExam, issuedInvoice, newPatient, setTaxRate } from "./billing-support";

let reception: string;
let owner: string;
beforeAll(async () => {
  reception = await cookieFor("receptionist");
  owner = await cookieFor("owner");
  await setTaxRate(2000);
});

const post = (path: string, form: Record<string, string>, cookie = reception) => makeRequest(path, { form, cookie });

describe("fee schedule", () => {
  it("adds a fee with its price in minor units, and refuses bad prices and duplicate codes with field errors", async () => {
    const code = `FT${Date.now() % 100000}`;
    const ok = await run(
      feesAction,
      post(
        "/settings/fees",
        {
          intent: "save",
          code,
          description: "Binocular vision assessment",
          price: "42.50",
          kind: "service",
          taxCategory: "exempt",
        },
        owner,
      ),
    );
    expect(statusOf(ok)).toBe(302);
    const [row] = await db.select().from(feeItems).where(eq(feeItems.code, code));
    expect(row).toMatchObject({ priceMinor: 4250, taxCategory: "exempt" });

    const bad = await run(
      feesAction,
      post(
        "/settings/fees",
        {
          intent: "save",
          code: `${code}X`,
          description: "Thing",
          price: "12.345",
          kind: "item",
          taxCategory: "standard",
        },
        owner,
      ),
    );
    expect(statusOf(bad)).toBe(400);
    expect(dataOf<{ error: Record<string, string[]> }>(bad).error.price?.[0]).toMatch(/no more than two decimals/);

    const dup = await run(
      feesAction,
      post(
        "/settings/fees",
        {
          intent: "save",
          code: code.toLowerCase(),
          description: "Again",
          price: "1",
          kind: "item",
          taxCategory: "standard",
        },
        owner,
      ),
    );
    expect(statusOf(dup)).toBe(400);
    expect(dataOf<{ error: Record<string, string[]> }>(dup).error.code?.[0]).toMatch(/already in the fee schedule/);
  });

  it("keeps the tax rate as basis points, refusing rates outside 0–100 % or with more than two decimals", async () => {
    const ok = await run(feesAction, post("/settings/fees", { intent: "tax", taxRate: "17.5" }, owner));
    expect(statusOf(ok)).toBe(302);
    const [row] = await db.select({ taxRateBp: practiceSettings.taxRateBp }).from(practiceSettings);
    expect(row!.taxRateBp).toBe(1750);
    for (const bad of ["abc", "101", "-1", "12.345"]) {
      const res = await run(feesAction, post("/settings/fees", { intent: "tax", taxRate: bad }, owner));
      expect(statusOf(res)).toBe(400);
      expect(dataOf<{ error: Record<string, string[]> }>(res).error.taxRate?.length).toBeGreaterThan(0);
    }
    await setTaxRate(2000);
  });

  it("is the owner's alone", async () => {
    const res = await run(
      feesAction,
      post(
        "/settings/fees",
        { intent: "save", code: "NOPE", description: "x", price: "1", kind: "item", taxCategory: "standard" },
        reception,
      ),
    );
    expect(statusOf(res)).toBe(403);
  });
});

describe("raising an invoice from a completed exam", () => {
  it("offers the appointment type's default fee, creates a draft with it plus the picked items, totals on the server", async () => {
    const patient = await newPatient();
    const exam = await fee("EXAM", 6500, "exempt");
    const frame = await fee("FRAME", 8900, "standard", "item");
    const e = await finishedExam(patient.id, exam.id);
    const page = dataOf<{ exam: { defaultFeeItemId: string; completed: boolean }; patient: { id: string } }>(
      await run(newInvoiceLoader, makeRequest(`/billing/invoices/new?exam=${e.id}`, { cookie: reception })),
    );
    expect(page.exam).toMatchObject({ defaultFeeItemId: exam.id, completed: true });
    expect(page.patient.id).toBe(patient.id);

    const res = (await run(
      newInvoiceAction,
      post("/billing/invoices/new", {
        patientId: patient.id,
        examId: e.id,
        [`qty_${exam.id}`]: "1",
        [`qty_${frame.id}`]: "1",
      }),
    )) as Response;
    expect(res.status).toBe(302);
    const id = res.headers.get("location")!.split("/").pop()!;
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    // 65.00 exempt + 89.00 at 20 % = 17.80 tax → 171.80
    expect(inv).toMatchObject({
      status: "draft",
      number: null,
      examId: e.id,
      subtotalMinor: 15400,
      taxMinor: 1780,
      totalMinor: 17180,
    });
    const audit = await db.select().from(auditLog).where(eq(auditLog.entityId, id));
    expect(audit.map((a) => a.action)).toContain("billing.invoice_created");

    // The same exam cannot be invoiced twice.
    const again = await run(
      newInvoiceAction,
      post("/billing/invoices/new", { patientId: patient.id, examId: e.id, [`qty_${exam.id}`]: "1" }),
    );
    expect(statusOf(again)).toBe(409);
  });

  it("refuses an exam that is not finished, and an empty or malformed form, with clear errors", async () => {
    const patient = await newPatient();
    const exam = await fee("EXAM", 6500);
    const e = await finishedExam(patient.id, exam.id, { signed: false, completed: false });
    const r1 = await run(
      newInvoiceAction,
      post("/billing/invoices/new", { patientId: patient.id, examId: e.id, [`qty_${exam.id}`]: "1" }),
    );
    expect(statusOf(r1)).toBe(400);
    expect(JSON.stringify(dataOf(r1))).toContain("not finished yet");
    const r2 = await run(newInvoiceAction, post("/billing/invoices/new", { patientId: patient.id }));
    expect(statusOf(r2)).toBe(400);
    expect(JSON.stringify(dataOf(r2))).toContain("Pick at least one fee");
    const r3 = await run(
      newInvoiceAction,
      post("/billing/invoices/new", { patientId: "nope", [`qty_${exam.id}`]: "1.5" }),
    );
    expect(statusOf(r3)).toBe(400);
    const r4 = await run(
      newInvoiceAction,
      post("/billing/invoices/new", { patientId: patient.id, customDescription: "Repair", customPrice: "abc" }),
    );
    expect(statusOf(r4)).toBe(400);
    expect(JSON.stringify(dataOf(r4))).toContain("Give the price in GBP");
  });

  it("keeps optometrists and patients out of billing", async () => {
    for (const role of ["optometrist", "patient"]) {
      const cookie = await cookieFor(role);
      expect(statusOf(await run(listLoader, makeRequest("/billing", { cookie })))).toBe(403);
      expect(statusOf(await run(newInvoiceAction, post("/billing/invoices/new", {}, cookie)))).toBe(403);
    }
  });
});

describe("draft editing and totals", () => {
  it("applies a percentage discount shared over the lines before tax, rounding per line", async () => {
    const patient = await newPatient();
    const user = await userByEmail("reception@dioptra-demo.test");
    const a = await fee("SVC", 6500, "exempt");
    const b = await fee("GOODS", 833, "standard", "item");
    const id = await createInvoice({
      patientId: patient.id,
      lines: [
        { feeItemId: a.id, quantity: 1 },
        { feeItemId: b.id, quantity: 2 },
      ],
      actorUserId: user.id,
    });
    const res = await run(
      invoiceAction,
      post(`/billing/invoices/${id}`, { intent: "discount", discountKind: "percent", discountValue: "10" }),
      { invoiceId: id },
    );
    expect(statusOf(res)).toBe(302);
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    // subtotal 6500 + 1666 = 8166; 10 % = 816.6 → 817; goods' share 1666/8166 × 817 = 166.7 → 167;
    // goods net 1499 × 20 % = 299.8 → 300 tax; total 8166 − 817 + 300 = 7649
    expect(inv).toMatchObject({ subtotalMinor: 8166, discountMinor: 817, taxMinor: 300, totalMinor: 7649 });
    const lines = await db.select().from(invoiceLines).where(eq(invoiceLines.invoiceId, id));
    expect(lines.reduce((s, l) => s + l.discountMinor, 0)).toBe(817);

    const bad = await run(
      invoiceAction,
      post(`/billing/invoices/${id}`, { intent: "discount", discountKind: "percent", discountValue: "150" }),
      { invoiceId: id },
    );
    expect(statusOf(bad)).toBe(400);
    expect(dataOf<{ error: Record<string, string[]> }>(bad).error.discountValue?.[0]).toMatch(/0 to 100/);
  });

  it("locks lines once issued", async () => {
    const { id } = await issuedInvoice([{ priceMinor: 1000 }]);
    const f = await fee("X", 100);
    const res = await run(
      invoiceAction,
      post(`/billing/invoices/${id}`, { intent: "add-line", feeItemId: f.id, quantity: "1" }),
      { invoiceId: id },
    );
    expect(statusOf(res)).toBe(409);
    expect(JSON.stringify(dataOf(res))).toContain("Only a draft can be changed");
  });

  it("answers 404 for an unknown or malformed invoice id", async () => {
    expect(
      statusOf(await run(invoiceLoader, makeRequest("/billing/invoices/x", { cookie: reception }), { invoiceId: "x" })),
    ).toBe(404);
    expect(
      statusOf(
        await run(invoiceLoader, makeRequest("/", { cookie: reception }), {
          invoiceId: "00000000-0000-4000-8000-000000000000",
        }),
      ),
    ).toBe(404);
  });
});

describe("gap-free invoice numbers", () => {
  it("gives 25 drafts issued at once 25 consecutive, distinct numbers; a failed issue leaves no gap", async () => {
    const patient = await newPatient();
    const user = await userByEmail("reception@dioptra-demo.test");
    const f = await fee("N", 1000);
    const zero = await fee("Z", 0);
    const good = await Promise.all(
      Array.from({ length: 25 }, () =>
        createInvoice({ patientId: patient.id, lines: [{ feeItemId: f.id, quantity: 1 }], actorUserId: user.id }),
      ),
    );
    // Drafts whose issue fails (a zero total) are interleaved: their counter increment must roll back.
    const failing = await Promise.all(
      Array.from({ length: 5 }, () =>
        createInvoice({ patientId: patient.id, lines: [{ feeItemId: zero.id, quantity: 1 }], actorUserId: user.id }),
      ),
    );
    const results = await Promise.allSettled(
      [...good, ...failing].sort(() => Math.random() - 0.5).map((id) => issueInvoice(id, user.id)),
    );
    expect(results.filter((r) => r.status === "rejected")).toHaveLength(5);
    const rows = await db.select({ number: invoices.number }).from(invoices).where(inArray(invoices.id, good));
    const numbers = rows.map((r) => r.number!).sort((a, b) => a - b);
    expect(new Set(numbers).size).toBe(25);
    expect(numbers[24]! - numbers[0]!).toBe(24);
    // And the whole sequence so far has no holes: numbers 1..max all exist.
    const all = (await db.select({ number: invoices.number }).from(invoices))
      .map((r) => r.number)
      .filter((n): n is number => n !== null);
    expect(all.length).toBe(Math.max(...all));
  });

  it("issuing twice is refused and keeps the first number", async () => {
    const { id, number, reception: r } = await issuedInvoice([{ priceMinor: 500 }]);
    await expect(issueInvoice(id, r.id)).rejects.toThrow(/already issued/);
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv!.number).toBe(number);
  });
});

describe("desk payments, refunds, receipts", () => {
  it("records cash, then card, moving the invoice to part paid then paid, and e-mails receipts", async () => {
    const { id, patient } = await issuedInvoice([{ priceMinor: 6500 }, { priceMinor: 3000 }]);
    const r1 = await run(
      invoiceAction,
      post(`/billing/invoices/${id}`, { intent: "pay-desk", method: "cash", amount: "20", reference: "" }),
      { invoiceId: id },
    );
    expect(statusOf(r1)).toBe(302);
    let [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "partially_paid", paidMinor: 2000 });
    const over = await run(
      invoiceAction,
      post(`/billing/invoices/${id}`, { intent: "pay-desk", method: "card_desk", amount: "75.01" }),
      { invoiceId: id },
    );
    expect(statusOf(over)).toBe(400);
    expect(dataOf<{ error: Record<string, string[]> }>(over).error.amount?.[0]).toContain(
      "more than the amount due (£75.00)",
    );
    const r2 = await run(
      invoiceAction,
      post(`/billing/invoices/${id}`, { intent: "pay-desk", method: "card_desk", amount: "75.00", reference: "T-991" }),
      { invoiceId: id },
    );
    expect(statusOf(r2)).toBe(302);
    [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "paid", paidMinor: 9500 });
    const mail = await mailTo(patient.email!);
    expect(mail.filter((m) => m.subject.startsWith("Receipt for your payment"))).toHaveLength(2);
    expect(mail[0]!.attachments[0]!.filename).toMatch(/^receipt-INV-\d{6}\.pdf$/);
    const paid = await run(
      invoiceAction,
      post(`/billing/invoices/${id}`, { intent: "pay-desk", method: "cash", amount: "1" }),
      { invoiceId: id },
    );
    expect(statusOf(paid)).toBe(409);
  });

  it("never takes two desk payments beyond the total when both are entered at once", async () => {
    const { id, reception: r } = await issuedInvoice([{ priceMinor: 4000 }]);
    const results = await Promise.allSettled(
      Array.from({ length: 6 }, () =>
        recordDeskPayment({ invoiceId: id, method: "cash", amountMinor: 4000, reference: "", actorUserId: r.id }),
      ),
    );
    expect(results.filter((x) => x.status === "fulfilled")).toHaveLength(1);
    const rows = await db.select().from(payments).where(eq(payments.invoiceId, id));
    expect(rows).toHaveLength(1);
  });

  it("refunds in part and in full, never more than was paid, and the invoice follows", async () => {
    const { id, reception: r } = await issuedInvoice([{ priceMinor: 5000 }]);
    const { paymentId } = await recordDeskPayment({
      invoiceId: id,
      method: "card_desk",
      amountMinor: 5000,
      reference: "",
      actorUserId: r.id,
    });
    const part = await run(
      invoiceAction,
      post(`/billing/invoices/${id}`, { intent: "refund", paymentId, amount: "12.50", reason: "Goodwill" }),
      { invoiceId: id },
    );
    expect(statusOf(part)).toBe(302);
    let [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "partially_paid", paidMinor: 3750 });
    const tooMuch = await run(
      invoiceAction,
      post(`/billing/invoices/${id}`, { intent: "refund", paymentId, amount: "40", reason: "Oops" }),
      { invoiceId: id },
    );
    expect(statusOf(tooMuch)).toBe(400);
    expect(JSON.stringify(dataOf(tooMuch))).toContain("At most £37.50");
    await refundPayment({ paymentId, amountMinor: 3750, reason: "Returned frame", actorUserId: r.id });
    [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "open", paidMinor: 0 });
    await expect(refundPayment({ paymentId, amountMinor: 1, reason: "again", actorUserId: r.id })).rejects.toThrow(
      /At most £0.00/,
    );
  });
});

describe("voiding", () => {
  it("voids an unpaid invoice with a reason and keeps its number; refuses one with money on it", async () => {
    const { id, number } = await issuedInvoice([{ priceMinor: 2000 }]);
    const noReason = await run(invoiceAction, post(`/billing/invoices/${id}`, { intent: "void", reason: "" }), {
      invoiceId: id,
    });
    expect(statusOf(noReason)).toBe(400);
    const ok = await run(
      invoiceAction,
      post(`/billing/invoices/${id}`, { intent: "void", reason: "Raised for the wrong patient" }),
      { invoiceId: id },
    );
    expect(statusOf(ok)).toBe(302);
    const [inv] = await db.select().from(invoices).where(eq(invoices.id, id));
    expect(inv).toMatchObject({ status: "void", number, voidReason: "Raised for the wrong patient" });

    const paid = await issuedInvoice([{ priceMinor: 2000 }]);
    await recordDeskPayment({
      invoiceId: paid.id,
      method: "cash",
      amountMinor: 500,
      reference: "",
      actorUserId: paid.reception.id,
    });
    const refused = await run(
      invoiceAction,
      post(`/billing/invoices/${paid.id}`, { intent: "void", reason: "Changed mind" }),
      { invoiceId: paid.id },
    );
    expect(statusOf(refused)).toBe(409);
    expect(JSON.stringify(dataOf(refused))).toContain("Refund them first");
  });
});

describe("PDF", () => {
  it("renders the invoice with the embedded font (text extracted with pdftotext)", async () => {
    const { id, number } = await issuedInvoice([
      { priceMinor: 6500 },
      { priceMinor: 899, quantity: 2, tax: "standard" },
    ]);
    const res = (await run(
      invoicePdfLoader,
      makeRequest(`/billing/invoices/${id}/invoice.pdf`, { cookie: reception }),
      { invoiceId: id },
    )) as Response;
    expect(res.headers.get("content-type")).toBe("application/pdf");
    const dir = mkdtempSync(join(tmpdir(), "inv-"));
    const file = join(dir, "invoice.pdf");
    writeFileSync(file, Buffer.from(await res.arrayBuffer()));
    const text = execFileSync("pdftotext", ["-layout", file, "-"]).toString();
    expect(text).toContain(`INV-${String(number).padStart(6, "0")}`);
    expect(text).toContain("Larkspur Lane Eye Care");
    // 65.00 + 17.98, tax 20 % of 17.98 = 3.596 → 3.60; total 86.58
    expect(text).toContain("£3.60");
    expect(text).toContain("£86.58");
    const fonts = execFileSync("pdffonts", [file]).toString();
    expect(fonts).toMatch(/NunitoSans/i);
  });

  it("renders a receipt for one payment, and none for a payment that has not succeeded", async () => {
    const { id, number, reception: r } = await issuedInvoice([{ priceMinor: 6500 }]);
    const { paymentId } = await recordDeskPayment({
      invoiceId: id,
      method: "cash",
      amountMinor: 2500,
      reference: "",
      actorUserId: r.id,
    });
    const res = (await run(
      receiptPdfLoader,
      makeRequest(`/billing/payments/${paymentId}/receipt.pdf`, { cookie: reception }),
      { paymentId },
    )) as Response;
    const file = join(mkdtempSync(join(tmpdir(), "rcpt-")), "receipt.pdf");
    writeFileSync(file, Buffer.from(await res.arrayBuffer()));
    const text = execFileSync("pdftotext", ["-layout", file, "-"]).toString();
    expect(text).toContain("RECEIPT");
    expect(text).toContain("£25.00");
    expect(text).toContain("Cash");
    expect(text).toContain(`INV-${String(number).padStart(6, "0")}`);
    expect(text).toMatch(/Still due on the invoice\s+£40.00/);
    const patientCookie = await cookieFor("patient");
    expect(
      statusOf(
        await run(
          receiptPdfLoader,
          makeRequest(`/billing/payments/${paymentId}/receipt.pdf`, { cookie: patientCookie }),
          { paymentId },
        ),
      ),
    ).toBe(403);
    expect(
      statusOf(
        await run(receiptPdfLoader, makeRequest("/", { cookie: reception }), {
          paymentId: "00000000-0000-4000-8000-000000000000",
        }),
      ),
    ).toBe(404);
  });
});

describe("takings", () => {
  it("totals today's payments by method, less refunds, reconciles, and exports CSV", async () => {
    const [{ tz } = { tz: "Europe/London" }] = await db
      .select({ tz: practiceSettings.timeZone })
      .from(practiceSettings);
    const day = new Intl.DateTimeFormat("en-CA", {
      timeZone: tz,
      year: "numeric",
      month: "2-digit",
      day: "2-digit",
    }).format(new Date());
    const before = dataOf<{ byMethod: { label: string; received: string }[]; mismatches: unknown[] }>(
      await run(takingsLoader, makeRequest(`/billing/takings?day=${day}`, { cookie: reception })),
    );
    const parse = (s: string) => Math.round(Number(s.replace(/[£,]/g, "")) * 100);
    const cashBefore = parse(before.byMethod.find((m) => m.label === "Cash")!.received);
    const { id, reception: r } = await issuedInvoice([{ priceMinor: 12345 }]);
    const { paymentId } = await recordDeskPayment({
      invoiceId: id,
      method: "cash",
      amountMinor: 12345,
      reference: "",
      actorUserId: r.id,
    });
    await refundPayment({ paymentId, amountMinor: 345, reason: "Rounding goodwill", actorUserId: r.id });
    const after = dataOf<{ byMethod: { label: string; received: string; refunded: string }[]; mismatches: unknown[] }>(
      await run(takingsLoader, makeRequest(`/billing/takings?day=${day}`, { cookie: reception })),
    );
    expect(parse(after.byMethod.find((m) => m.label === "Cash")!.received) - cashBefore).toBe(12345);
    expect(after.mismatches).toEqual([]);
    const month = dataOf<{ entries: { invoiceId: string }[] }>(
      await run(takingsLoader, makeRequest(`/billing/takings?month=${day.slice(0, 7)}`, { cookie: reception })),
    );
    expect(month.entries.filter((e) => e.invoiceId === id)).toHaveLength(2);
    const csv = (await run(
      takingsCsvLoader,
      makeRequest(`/billing/takings.csv?day=${day}`, { cookie: reception }),
    )) as Response;
    expect(csv.headers.get("content-type")).toContain("text/csv");
    const body = await csv.text();
    expect(body.split("\r\n")[0]).toBe("date,time,kind,status,method,invoice,patient,amount,currency,reference");
    expect(body).toContain(",payment,succeeded,cash,");
    expect(body).toContain(",123.45,GBP,");
    expect(body).toContain(",refund,refunded,cash,");
    expect(body).toContain(",-3.45,GBP,");
  });
});
