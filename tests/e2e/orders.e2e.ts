import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import pg from "pg";
import type { Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, inject, it } from "vitest";
import { DEMO, expectAccessible, mailTo, screenshot, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();
const ready = (page: Page) => page.waitForLoadState("networkidle");
const SLOW = { timeout: 20_000 };
const LAB_EMAIL = "orders@brackenford-lenslab.test";
let client: pg.Client;
const q = async <T extends pg.QueryResultRow>(text: string, values: unknown[] = []) =>
  (await client.query<T>(text, values)).rows;

function pdfText(bytes: Buffer | ArrayBuffer) {
  const dir = mkdtempSync(join(tmpdir(), "orders-e2e-"));
  writeFileSync(join(dir, "doc.pdf"), Buffer.from(bytes as ArrayBuffer));
  return execFileSync("pdftotext", ["-layout", join(dir, "doc.pdf"), "-"]).toString();
}

beforeAll(async () => {
  client = new pg.Client({ connectionString: inject("e2eDatabaseUrl") });
  await client.connect();
  // The portal test turns this patient's e-mails off; this flow needs the default (on).
  await q("update patients set reminders_by_email = true where email = $1", [DEMO.patient]);
});
afterAll(async () => {
  await client?.end();
});

describe("optical orders in the browser", () => {
  it("builds a spectacle order from a prescription, sends it to the lab, fails the check on a wrong axis, remakes, passes, tells the patient, takes payment and collects; the portal shows it", async () => {
    const desk = await browser.newPage();
    await signIn(desk, DEMO.receptionist);
    await desk.waitForURL((u) => u.pathname === "/");
    await desk.getByRole("navigation", { name: "Main" }).getByRole("link", { name: "Orders" }).click();
    await desk.waitForURL("**/orders");
    await ready(desk);
    await expectAccessible(desk);
    // The demo practice has orders in every state; one has been at the lab past the overdue limit.
    expect(await desk.getByText("Overdue at the lab").count()).toBeGreaterThan(0);

    await desk.getByRole("link", { name: "New order" }).click();
    await desk.waitForURL("**/orders/new");
    await desk.getByLabel("Name, phone, e-mail or date of birth").fill("Achterberg");
    await desk.getByRole("button", { name: "Search" }).click();
    await desk.getByRole("link", { name: "Rosalind Achterberg" }).click();
    await ready(desk);
    await expectAccessible(desk);
    await desk
      .getByRole("link", { name: /Order spectacles from the prescription/ })
      .first()
      .click();
    await ready(desk);
    await expectAccessible(desk);

    // A frame that is out of stock, and no PDs: clear messages, nothing saved.
    await desk
      .getByLabel("Frame from stock")
      .selectOption({ label: "Little Otter Kids Pebble, Red, 44-16-125 — £49.00 — out of stock" });
    await desk.getByLabel("Lab", { exact: true }).selectOption({ label: "Brackenford Lens Lab" });
    await desk
      .getByLabel("Lens price (fee schedule)")
      .selectOption({ label: "LN-VF — Varifocal lenses, pair — £180.00" });
    await desk.getByLabel("Right fitting height (mm)").fill("20");
    await desk.getByLabel("Left fitting height (mm)").fill("20");
    await desk.getByRole("button", { name: "Save order" }).click();
    await expect
      .poll(() => desk.getByText("Right PD: give the monocular PD in mm, e.g. 32.").count())
      .toBeGreaterThan(0);
    await desk.getByLabel("Right monocular PD (mm)").fill("32");
    await desk.getByLabel("Left monocular PD (mm)").fill("31.5");
    await desk.getByRole("button", { name: "Save order" }).click();
    await expect.poll(() => desk.getByText("That frame is out of stock").count(), SLOW).toBeGreaterThan(0);
    await expectAccessible(desk);
    const [before] = await q<{ quantity: number }>(
      "select quantity from frames where model = 'Tern 52' and colour = 'Matte black'",
    );

    await desk.getByLabel("Frame from stock").selectOption({
      label: `Harbourline Eyewear Tern 52, Matte black, 52-18-140 — £89.00 — ${before!.quantity} in stock`,
    });
    await screenshot(desk, "orders-new-spectacles");
    // Leave the field first: its error message goes on blur, and the page must not move under the click.
    await desk.getByLabel("Frame from stock").blur();
    await desk.getByRole("button", { name: "Save order" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Order saved as a draft");
    await desk.waitForURL(/\/orders\/[0-9a-f-]{36}$/);
    const orderId = new URL(desk.url()).pathname.split("/").pop()!;
    const [after] = await q<{ quantity: number }>(
      "select quantity from frames where model = 'Tern 52' and colour = 'Matte black'",
    );
    expect(after!.quantity).toBe(before!.quantity - 1);
    await ready(desk);
    await expectAccessible(desk);

    // The order form goes to the lab by e-mail, as a PDF.
    await desk.getByRole("button", { name: "Send to the lab" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Sent to the lab");
    await expect
      .poll(async () => (await mailTo(LAB_EMAIL)).filter((m) => m.attachments.length).length, SLOW)
      .toBeGreaterThan(0);
    const [labMail] = (await mailTo(LAB_EMAIL)).filter((m) => m.attachments.length);
    expect(labMail!.subject).toMatch(/^Spectacle order ORD-\d{5} from Larkspur Lane Eye Care$/);
    const pdf = await (
      await fetch(`http://127.0.0.1:${inject("mailApiPort")}/messages/${labMail!.id}/attachments/0`)
    ).arrayBuffer();
    const labText = pdfText(pdf);
    expect(labText).toContain("Rosalind Achterberg");
    expect(labText).toMatch(/Right\s+-2\.00\s+-0\.50\s+175\s+\+1\.25/);
    expect(labText).toMatch(/Left\s+-1\.75\s+-0\.25\s+010\s+\+1\.25/);
    expect(labText).toContain("Harbourline Eyewear Tern 52, Matte black, 52-18-140");
    expect(labText).toMatch(/Right\s+32\.0 mm\s+20\.0 mm/);
    expect(labText).toContain("Varifocal (progressive)");

    await desk.getByRole("button", { name: "Mark received from the lab" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Marked received");
    await ready(desk);
    await expectAccessible(desk);

    // A reading in a bad format is refused where it was typed.
    await desk.getByLabel("Right lensmeter reading").fill("-2.00 -0.50 x");
    await desk.getByLabel("Right add").fill("+1.25");
    await desk.getByLabel("Left lensmeter reading").fill("-1.75 -0.25 x 10");
    await desk.getByLabel("Left add").fill("+1.25");
    await desk.getByRole("button", { name: "Run the check" }).click();
    await expect.poll(() => desk.getByText(/Right reading: /).count(), SLOW).toBeGreaterThan(0);
    // Wrong axis: 15° off a 0.50 D cylinder, outside BS EN ISO 21987's ±9° (the demo practice is in the UK).
    await desk.getByLabel("Right lensmeter reading").fill("-2.00 -0.50 x 160");
    await desk.getByLabel("Right add").fill("+1.25");
    await desk.getByLabel("Left lensmeter reading").fill("-1.75 -0.25 x 10");
    await desk.getByLabel("Left add").fill("+1.25");
    await desk.getByRole("button", { name: "Run the check" }).click();
    await expect
      .poll(() => desk.getByTestId("toast").textContent(), SLOW)
      .toContain("Failed the check (BS EN ISO 21987:2017)");
    await ready(desk);
    await expect.poll(() => desk.getByRole("row", { name: /Right axis/ }).textContent()).toContain("Outside");
    await expectAccessible(desk);
    await screenshot(desk, "orders-check-failed");
    // The front desk cannot release it; a remake goes back to the lab.
    expect(await desk.getByText("These spectacles failed the check").count()).toBe(1);
    await desk.getByLabel("Reason for the remake").fill("Right axis 15 degrees out");
    await desk.getByRole("button", { name: "Send for a remake" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Marked for a remake");
    await desk.getByRole("button", { name: "Send the remake to the lab" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Sent to the lab");
    await expect
      .poll(async () => (await mailTo(LAB_EMAIL)).some((m) => m.subject.startsWith("Remake: Spectacle order")), SLOW)
      .toBe(true);
    await desk.getByRole("button", { name: "Mark received from the lab" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Marked received");
    await ready(desk);
    await desk.getByLabel("Right lensmeter reading").fill("-2.00 -0.50 x 177");
    await desk.getByLabel("Right add").fill("+1.25");
    await desk.getByLabel("Left lensmeter reading").fill("-1.75 -0.25 x 10");
    await desk.getByLabel("Left add").fill("+1.25");
    await desk.getByRole("button", { name: "Run the check" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Passed the check");
    await ready(desk);

    await desk.getByRole("button", { name: "Mark ready to collect" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Ready to collect");
    await expect
      .poll(async () => (await mailTo(DEMO.patient)).some((m) => /ready to collect/.test(m.subject)), SLOW)
      .toBe(true);
    await ready(desk);
    await expectAccessible(desk);

    // Collection takes the balance of the order's invoice.
    await desk.getByRole("button", { name: "Mark collected" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Collected");
    const [inv] = await q<{ status: string; paid_minor: number; total_minor: number }>(
      "select i.status, i.paid_minor, i.total_minor from invoices i join optical_orders o on o.invoice_id = i.id where o.id = $1",
      [orderId],
    );
    // £89.00 frame + £180.00 varifocal lenses, both standard-rated at the demo's 20 %: £322.80.
    expect(inv).toEqual({ status: "paid", paid_minor: 32280, total_minor: 32280 });
    const events = await q<{ to_state: string }>("select to_state from order_events where order_id = $1 order by at", [
      orderId,
    ]);
    expect(events.map((e) => e.to_state)).toEqual([
      "draft",
      "sent_to_lab",
      "received",
      "checked",
      "remake",
      "sent_to_lab",
      "received",
      "checked",
      "ready_to_collect",
      "collected",
    ]);
    await ready(desk);
    await expectAccessible(desk);
    await screenshot(desk, "orders-collected");

    // The order PDF from the page, and the prescription PDF with the UK registration wording.
    const orderPdf = await desk.request.get(`/orders/${orderId}/order.pdf`);
    expect(orderPdf.headers()["content-type"]).toBe("application/pdf");
    expect(pdfText(await orderPdf.body())).toContain("Remake");
    const [rx] = await q<{ id: string; patient_id: string }>(
      "select rx.id, rx.patient_id from prescriptions rx join optical_orders o on o.prescription_id = rx.id where o.id = $1",
      [orderId],
    );
    const rxPdf = await desk.request.get(`/patients/${rx!.patient_id}/prescriptions/${rx!.id}/pdf`);
    expect(pdfText(await rxPdf.body())).toContain("GOC registration no.");

    // The patient sees the order in the portal.
    const phone = await browser.newPage();
    await signIn(phone, DEMO.patient);
    await phone.waitForURL((u) => u.pathname.startsWith("/portal"));
    await phone.getByRole("navigation", { name: "Main" }).getByRole("link", { name: "Glasses and lenses" }).click();
    await phone.waitForURL("**/portal/orders");
    await ready(phone);
    const [{ number } = { number: 0 }] = await q<{ number: number }>(
      "select number from optical_orders where id = $1",
      [orderId],
    );
    const card = phone.locator("section").filter({ hasText: `ORD-${String(number).padStart(5, "0")}` });
    await expect.poll(() => card.textContent()).toContain("Collected");
    await expectAccessible(phone);
    await screenshot(phone, "portal-orders");
  }, 240_000);

  it("the owner keeps frames and labs and reads the order reports", async () => {
    const owner = await browser.newPage();
    await signIn(owner, DEMO.owner);
    await owner.waitForURL((u) => u.pathname === "/");
    for (const path of ["/settings/frames", "/settings/labs", "/orders/reports"]) {
      await owner.goto(path);
      await ready(owner);
      await expectAccessible(owner);
    }
    await owner.goto("/settings/frames");
    await ready(owner);
    await owner.getByLabel("Supplier").fill("Fellgate Optical Frames");
    await owner.getByLabel("Model").fill("Wren");
    await owner.getByLabel("Colour").fill("Olive");
    await owner.getByLabel("Size (eye-bridge-side)").fill("fifty");
    await owner.getByLabel("Price (GBP)").fill("99.00");
    await owner.getByLabel("Quantity in stock").fill("2");
    await owner.getByRole("button", { name: "Add frame" }).click();
    await expect.poll(() => owner.getByText("Give the boxed size as eye-bridge-side, e.g. 52-18-140.").count()).toBe(1);
    await owner.getByLabel("Size (eye-bridge-side)").fill("49-20-140");
    await owner.getByRole("button", { name: "Add frame" }).click();
    await expect
      .poll(() => owner.getByTestId("toast").textContent(), SLOW)
      .toContain("Fellgate Optical Frames Wren added to stock");
    await owner.goto("/orders/reports");
    await ready(owner);
    await expect.poll(() => owner.getByRole("heading", { name: /Remakes/ }).textContent()).toMatch(/Remakes \(\d+\)/);
    expect(await owner.getByText("Left lens chipped at the edge on arrival").count()).toBe(1);
    await screenshot(owner, "orders-reports");
  });
});
