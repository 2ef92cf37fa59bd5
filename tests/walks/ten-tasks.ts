/**
 * Ten everyday tasks, walked in Debian's Chromium against a running server, counting what a person
 * does: every click, tap, check or choice in a list is one click; every typed character (and each
 * Tab or Enter) is one keystroke. Fields typed into and scrolls needed to reach a target (the
 * target was outside the viewport when it was acted on) are counted beside them. Signing in is not
 * counted. Each task starts on its role's home page and moves by links and buttons only; the one
 * exception is the referral recipient, who opens the link in the e-mail.
 *
 * Fixtures a task needs but does not make (an appointment today, a patient due for recall, an
 * invoice for the portal's patient) are written to the database first; they are not counted.
 *
 *   BASE_URL=http://127.0.0.1:3000 npx tsx tests/walks/ten-tasks.ts
 *
 * DATABASE_URL (or DIOPTRA_PG_PORT) must point at the server's database and MAILBOX_API_URL (or
 * MAILBOX_API_PORT) at its mail stand-in. TASKS=1,2,3 runs only those tasks; tasks 2–6 use the patient
 * that task 1 registers (WALK_TAG names an earlier run's patient).
 */
import { tmpdir } from "node:os";
import { join } from "node:path";
import pg from "pg";
import { chromium, type Browser, type Locator, type Page } from "playwright-core";
import { databaseUrl } from "../../app/utils/db-url";

const BASE_URL = process.env.BASE_URL ?? "http://127.0.0.1:3000";
const PASSWORD = "demo-password";
const ZONE = "Europe/London";
const USERS = {
  owner: "owner@dioptra-demo.test",
  optometrist: "optometrist@dioptra-demo.test",
  desk: "reception@dioptra-demo.test",
  patient: "patient@dioptra-demo.test",
} as const;
const PHONE = { width: 390, height: 844 };
const TABLET = { width: 1024, height: 768 };
const DESKTOP = { width: 1280, height: 900 };

const db = new pg.Pool({ connectionString: databaseUrl(), max: 2 });
const q = async <T extends pg.QueryResultRow>(text: string, values: unknown[] = []) =>
  (await db.query<T>(text, values)).rows;

/** What a person did in one task. */
class Tally {
  clicks = 0;
  keys = 0;
  fields = 0;
  scrolls = 0;
  notes: string[] = [];
  constructor(readonly page: Page) {}

  private async reach(target: Locator) {
    await target.waitFor({ state: "visible" });
    const box = await target.boundingBox();
    const view = this.page.viewportSize();
    if (box && view && (box.y < 0 || box.y + Math.min(box.height, 20) > view.height)) this.scrolls++;
  }
  async click(target: Locator) {
    await this.reach(target);
    this.clicks++;
    await target.click();
  }
  async tap(target: Locator) {
    await this.reach(target);
    this.clicks++;
    await target.tap();
  }
  async check(target: Locator) {
    await this.reach(target);
    this.clicks++;
    await target.check();
  }
  async select(target: Locator, option: string | { label: string }) {
    await this.reach(target);
    this.clicks++;
    await target.selectOption(option);
  }
  /** Types `text` into a field: one keystroke a character. */
  async fill(target: Locator, text: string) {
    await this.reach(target);
    this.fields++;
    this.keys += text.length;
    await target.fill(text);
  }
  /** A date or time field: only the digits are typed (the separators come by themselves). */
  async fillDigits(target: Locator, value: string) {
    await this.reach(target);
    this.fields++;
    this.keys += value.replace(/\D/g, "").length;
    await target.fill(value);
  }
  async press(target: Locator, key: string) {
    this.keys++;
    await target.press(key);
  }
  /** A drag is one pointer action; `to` is asked for once `from` is in view. */
  async drag(from: Locator, to: () => Promise<{ x: number; y: number }>) {
    await this.reach(from);
    await from.evaluate((e) => e.scrollIntoView({ block: "center" }));
    this.clicks++;
    const box = (await from.boundingBox())!;
    const target = await to();
    await this.page.mouse.move(box.x + box.width / 2, box.y + 6);
    await this.page.mouse.down();
    await this.page.mouse.move(box.x + box.width / 2, box.y + 20, { steps: 4 });
    await this.page.mouse.move(target.x, target.y, { steps: 10 });
    await this.page.mouse.up();
  }
}

let browser: Browser;
let lastPage: Page | undefined;
/** A fresh browser context signed in as `email` (not counted), on that role's home page. */
async function signedIn(email: string, viewport = DESKTOP, touch = false) {
  const context = await browser.newContext({ baseURL: BASE_URL, viewport, hasTouch: touch, acceptDownloads: true });
  const page = await context.newPage();
  lastPage = page;
  page.setDefaultTimeout(20_000);
  await page.goto("/login");
  await page.getByLabel("E-mail").fill(email);
  await page.getByLabel("Password").fill(PASSWORD);
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.waitForURL((u) => !u.pathname.startsWith("/login"));
  await settle(page);
  return { page, t: new Tally(page) };
}
/** Waits for the page's requests to finish (hydration, fetchers); never counted. */
const settle = (page: Page) => page.waitForLoadState("networkidle").catch(() => undefined);
const until = async (what: () => Promise<boolean>, label: string, ms = 20_000) => {
  const end = Date.now() + ms;
  while (Date.now() < end) {
    if (await what().catch(() => false)) return;
    await new Promise((r) => setTimeout(r, 200));
  }
  throw new Error(`timed out waiting for ${label}`);
};
const main = (page: Page) => page.locator("main");
const nav = (page: Page, name: string) => page.getByRole("navigation", { name: "Main" }).getByRole("link", { name });

const tag = Date.now().toString(36).slice(-5);
const alpha = process.env.WALK_TAG ?? tag.replace(/\d/g, (d) => "abcdefghij"[Number(d)]!);
const PATIENT = { first: "Walker", last: `Tenbury${alpha}` };
const PATIENT_NAME = `${PATIENT.first} ${PATIENT.last}`;
const state: { todayAppointmentId?: string; examUrl?: string } = {};

/** An appointment today late in the evening (clear of the demo diary), written directly. */
async function appointmentToday(patientLast: string, status: string) {
  for (let attempt = 0; attempt < 40; attempt++) {
    const minute = 18 * 60 + Math.floor(Math.random() * 60) * 5;
    try {
      const [row] = await q<{ id: string }>(
        `insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status)
         select p.id, u.id, t.id,
                (date_trunc('day', now() at time zone $2) + make_interval(mins => $3)) at time zone $2,
                (date_trunc('day', now() at time zone $2) + make_interval(mins => $3 + t.duration_minutes)) at time zone $2,
                $4::appointment_status
           from patients p, users u, appointment_types t
          where p.last_name = $1 and u.email = $5 and t.name = 'Comprehensive eye exam'
         returning id`,
        [patientLast, ZONE, minute, status, USERS.optometrist],
      );
      await q("insert into appointment_status_changes (appointment_id, to_status) values ($1, $2)", [row!.id, status]);
      return row!.id;
    } catch (e) {
      if ((e as { code?: string }).code !== "23P01") throw e;
    }
  }
  throw new Error("no free time for today's appointment");
}

/** The first free half hour of Tobias Wren tomorrow from `fromMinute` (what the person sees on the calendar). */
async function freeTomorrow(fromMinute = 14 * 60) {
  const [row] = await q<{ day: string; minute: number }>(
    `with d as (select (date_trunc('day', now() at time zone $1) + interval '1 day')::date as day)
     select to_char(d.day, 'YYYY-MM-DD') as day, m as minute from d, generate_series($3::int, 17 * 60 - 30, 30) m
      where not exists (select 1 from appointments a join users u on u.id = a.provider_id
              where u.email = $2 and a.status not in ('cancelled', 'no_show')
                and tstzrange(a.starts_at, a.ends_at) && tstzrange((d.day + make_interval(mins => m)) at time zone $1,
                                                                   (d.day + make_interval(mins => m + 30)) at time zone $1))
      order by m limit 1`,
    [ZONE, USERS.optometrist, fromMinute],
  );
  return row!;
}
const hhmm = (m: number) => `${String(Math.floor(m / 60)).padStart(2, "0")}:${String(m % 60).padStart(2, "0")}`;
/** The calendar's place for `day` at `minute` (week view), a few pixels below the slot's top. */
async function slotPoint(page: Page, day: string, minute: number) {
  const slot = page.locator(`td.fc-timegrid-slot-lane[data-time="${hhmm(minute)}:00"]`);
  const col = (await page.locator(`td.fc-timegrid-col[data-date="${day}"]`).boundingBox())!;
  const s = (await slot.boundingBox())!;
  return { x: col.x + col.width / 2, y: s.y + 6 };
}

const RECIPIENT = "l.ferreira-holt@brackenford-eye.test";
const SURGEON = "Mr Lucan Ferreira-Holt";
const LETTER = "Thank you for seeing this patient. I would value your assessment of the findings below.";
const REPLY = "Seen in clinic; findings confirmed. Full letter to follow.";
const MAILBOX = process.env.MAILBOX_API_URL ?? `http://127.0.0.1:${process.env.MAILBOX_API_PORT ?? 2526}`;
/** The recipient links (`/r/…`) in the e-mails to `to`, from the mail stand-in's API. */
async function mailLinks(to: string): Promise<string[]> {
  const list = (await (await fetch(`${MAILBOX}/messages?to=${encodeURIComponent(to)}`)).json()) as { id: string }[];
  const links: string[] = [];
  for (const m of list) {
    const full = (await (await fetch(`${MAILBOX}/messages/${m.id}`)).json()) as { text: string };
    for (const found of full.text.matchAll(/https?:\/\/\S+\/r\/[\w.-]+/g)) links.push(found[0]);
  }
  return links;
}

/** A weekday two to fourteen months ahead with no closure yet (a repeated walk picks another). */
async function closableDay() {
  for (;;) {
    const [row] = await q<{ day: string; taken: boolean }>(
      `select to_char(d, 'YYYY-MM-DD') as day, exists (select 1 from closures c where d between c.starts_on and c.ends_on) as taken
         from (select (current_date + 60 + floor(random() * 360)::int) as d) x where extract(isodow from d) between 1 and 5`,
    );
    if (row && !row.taken) return row.day;
  }
}

/** An issued invoice for the portal's patient, raised at the desk beforehand (not counted). */
async function invoiceForPortalPatient(): Promise<string> {
  const [p] = await q<{ id: string }>("select patient_id as id from users where email = $1", [USERS.patient]);
  const { page } = await signedIn(USERS.desk);
  await page.goto(`/billing/invoices/new?patient=${p!.id}`);
  await settle(page);
  const qty = page.getByLabel("Quantity of Eye examination, adult");
  await until(async () => {
    await qty.fill("1");
    await page.waitForTimeout(300);
    return (await qty.inputValue()) === "1";
  }, "the quantity typed");
  await page.getByRole("button", { name: "Create draft invoice" }).click();
  await page.getByTestId("toast").filter({ hasText: "Draft invoice created" }).waitFor();
  await settle(page);
  await page.getByRole("button", { name: "Issue invoice" }).click();
  const toast = page.getByTestId("toast").filter({ hasText: /Issued as INV-/ });
  await toast.waitFor();
  const label = (await toast.textContent())!.match(/INV-\d+/)![0];
  await page.context().close();
  return label;
}

type Task = { name: string; run: () => Promise<Tally> };

const tasks: Task[] = [
  {
    name: "1 Register a new patient and book them",
    run: async () => {
      const { page, t } = await signedIn(USERS.desk);
      await t.click(nav(page, "Schedule"));
      await page.waitForURL((u) => u.pathname === "/schedule");
      await settle(page);
      // The free times below the calendar; tomorrow's, with the optometrist.
      await t.click(page.getByRole("link", { name: "Next day ›" }));
      await settle(page);
      await t.click(page.getByRole("list", { name: "Free times of Tobias Wren" }).getByRole("button").first());
      const dialog = page.getByRole("dialog", { name: "Book an appointment" });
      await t.click(dialog.getByText("Register a new patient"));
      await t.fill(dialog.getByLabel("First name", { exact: true }), PATIENT.first);
      await t.fill(dialog.getByLabel("Last name", { exact: true }), PATIENT.last);
      await t.fillDigits(dialog.getByRole("textbox", { name: "Date of birth", exact: true }), "1984-03-21");
      await t.fill(dialog.getByLabel("E-mail (optional)"), `walker.${alpha}@dioptra-demo.test`);
      await t.click(dialog.getByRole("button", { name: "Register and choose" }));
      await until(
        async () => ((await dialog.getByTestId("chosen-patient").textContent()) ?? "").includes(PATIENT.last),
        "patient chosen",
      );
      await t.select(dialog.getByLabel("Appointment type"), { label: "Comprehensive eye exam (30 min)" });
      await t.click(dialog.getByRole("button", { name: "Book appointment" }));
      await page.getByTestId("toast").filter({ hasText: "Appointment booked" }).waitFor();
      return t;
    },
  },
  {
    name: "2 Mark a booked patient arrived",
    run: async () => {
      state.todayAppointmentId = await appointmentToday(PATIENT.last, "booked");
      const { page, t } = await signedIn(USERS.desk);
      const item = page.locator(`li[data-appointment-id="${state.todayAppointmentId}"]`);
      await t.click(item.getByRole("button", { name: `Mark arrived for ${PATIENT_NAME}` }));
      await until(async () => (await item.textContent())!.includes("Arrived"), "arrived");
      return t;
    },
  },
  {
    name: "3 Invoice a visit, part payment, pay link",
    run: async () => {
      const { page, t } = await signedIn(USERS.desk);
      await t.click(page.getByRole("link", { name: new RegExp(`${PATIENT_NAME}\\s*: open the appointment`) }));
      await page.waitForURL((u) => u.pathname.startsWith("/schedule/appointments/"));
      await settle(page);
      await t.click(page.getByRole("link", { name: "Raise invoice" }));
      await page.waitForURL((u) => u.pathname === "/billing/invoices/new");
      await settle(page);
      await t.click(page.getByRole("button", { name: "Create draft invoice" }));
      await page.getByTestId("toast").filter({ hasText: "Draft invoice created" }).waitFor();
      await settle(page);
      await t.click(page.getByRole("button", { name: "Issue invoice" }));
      await page
        .getByTestId("toast")
        .filter({ hasText: /Issued as INV-/ })
        .waitFor();
      await settle(page);
      await t.fill(page.getByLabel(/^Amount \(/), "20");
      await t.click(page.getByRole("button", { name: "Record payment" }));
      await page.getByTestId("toast").filter({ hasText: "£20.00 recorded" }).waitFor();
      await settle(page);
      await t.click(page.getByRole("button", { name: "E-mail invoice with payment link" }));
      await page
        .getByTestId("toast")
        .filter({ hasText: /sent|e-mailed/i })
        .waitFor();
      return t;
    },
  },
  {
    name: "4 Move an appointment to another time",
    run: async () => {
      const [appt] = await q<{ id: string; minute: number }>(
        `select a.id, extract(hour from a.starts_at at time zone $2)::int * 60 + extract(minute from a.starts_at at time zone $2)::int as minute
           from appointments a join patients p on p.id = a.patient_id
          where p.last_name = $1 and a.starts_at > now() + interval '6 hours' order by a.starts_at limit 1`,
        [PATIENT.last, ZONE],
      );
      const to = await freeTomorrow(appt!.minute + 60);
      const { page, t } = await signedIn(USERS.desk);
      await t.click(nav(page, "Schedule"));
      await page.waitForURL((u) => u.pathname === "/schedule");
      await settle(page);
      await page.locator("td.fc-timegrid-col[data-date]").first().waitFor();
      if ((await page.locator(`td.fc-timegrid-col[data-date="${to.day}"]`).count()) === 0)
        await t.click(page.getByRole("button", { name: "Next ›" }));
      const event = page
        .locator(`td.fc-timegrid-col[data-date="${to.day}"] .fc-timegrid-event`, { hasText: PATIENT_NAME })
        .first();
      await t.drag(event, () => slotPoint(page, to.day, to.minute));
      t.notes.push(`drag from ${hhmm(appt!.minute)} to ${hhmm(to.minute)} = 1 click`);
      await until(async () => {
        const [row] = await q<{ minute: number }>(
          "select extract(hour from starts_at at time zone $2)::int * 60 + extract(minute from starts_at at time zone $2)::int as minute from appointments where id = $1",
          [appt!.id, ZONE],
        );
        return row!.minute === to.minute;
      }, "the move saved");
      return t;
    },
  },
  {
    name: "5 Send recalls to patients who are due",
    run: async () => {
      // One more patient due: an eye exam two years ago this month.
      const [due] = await q<{ id: string }>(
        `insert into patients (first_name, last_name, date_of_birth, email) values ('Rowan', $1, date '1970-02-02', $2) returning id`,
        [`Recallby${alpha}`, `rowan.${alpha}@dioptra-demo.test`],
      );
      // At a random time that month, clear of earlier walks' fixtures.
      for (let attempt = 0; ; attempt++) {
        try {
          await q(
            `insert into appointments (patient_id, provider_id, appointment_type_id, starts_at, ends_at, status)
             select $1, u.id, t.id, date_trunc('month', now()) - interval '2 years' + make_interval(mins => $3),
                    date_trunc('month', now()) - interval '2 years' + make_interval(mins => $3 + 30), 'completed'
               from users u, appointment_types t where u.email = $2 and t.name = 'Comprehensive eye exam'`,
            [due!.id, USERS.optometrist, Math.floor(Math.random() * 25 * 24 * 12) * 5],
          );
          break;
        } catch (e) {
          if ((e as { code?: string }).code !== "23P01" || attempt > 40) throw e;
        }
      }
      const { page, t } = await signedIn(USERS.desk);
      await t.click(nav(page, "Schedule"));
      await page.waitForURL((u) => u.pathname === "/schedule");
      await settle(page);
      await t.click(page.getByRole("link", { name: "Recalls" }));
      await page.waitForURL((u) => u.pathname === "/schedule/recalls");
      await settle(page);
      await t.check(page.getByLabel("Choose all who can be e-mailed"));
      const send = page.getByRole("button", { name: /^Send recall e-mails \(\d+\)/ });
      t.notes.push((await send.textContent())!.trim());
      await t.click(send);
      await until(
        async () => (await q("select 1 from recall_messages where patient_id = $1", [due!.id])).length === 1,
        "the recall queued",
      );
      return t;
    },
  },
  {
    name: "6 Exam to spectacle prescription PDF",
    run: async () => {
      const { page, t } = await signedIn(USERS.optometrist);
      await t.click(page.getByRole("link", { name: new RegExp(`${PATIENT_NAME}\\s*: open the appointment`) }));
      await page.waitForURL((u) => u.pathname.startsWith("/schedule/appointments/"));
      await settle(page);
      await t.click(page.getByRole("button", { name: `Start exam for ${PATIENT_NAME}` }));
      await page.waitForURL(/\/exams\/[0-9a-f-]{36}$/);
      await settle(page);
      await t.fill(page.getByLabel("Right distance best corrected VA", { exact: true }), "6/6");
      await t.fill(page.getByLabel("Left distance best corrected VA", { exact: true }), "6/6");
      await t.fill(page.getByLabel("Right subjective sphere, cylinder and axis", { exact: true }), "-1.25 -0.50 x 90");
      await t.fill(page.getByLabel("Left subjective sphere, cylinder and axis", { exact: true }), "-1.00");
      await t.click(page.getByRole("button", { name: /^Both eyes \(copy subjective to final\)/ }));
      await until(
        async () =>
          (await page.getByLabel("Right final sphere, cylinder and axis", { exact: true }).inputValue()) !== "",
        "final copied",
      );
      await t.fill(page.getByLabel("Right IOP (mmHg)"), "16");
      await t.select(page.getByLabel("Right IOP method", { exact: true }), "goldmann");
      await t.fill(page.getByLabel("Left IOP (mmHg)"), "17");
      await t.select(page.getByLabel("Left IOP method", { exact: true }), "goldmann");
      await page.getByLabel("Left IOP (mmHg)").blur();
      await settle(page);
      await page.waitForTimeout(1500);
      await settle(page);
      await t.click(page.getByRole("button", { name: "Sign exam" }));
      await page
        .getByText(/^Signed by /)
        .first()
        .waitFor();
      state.examUrl = page.url();
      await settle(page);
      await t.click(page.getByRole("button", { name: "Issue prescription" }));
      const pdf = page.getByRole("link", { name: "Download PDF" }).first();
      await pdf.waitFor();
      const opened = page
        .context()
        .waitForEvent("page")
        .catch(() => null);
      const download = page.waitForEvent("download").catch(() => null);
      await t.click(pdf);
      await Promise.race([opened, download, page.waitForURL(/\.pdf|\/pdf/)]);
      return t;
    },
  },
  {
    name: "7 Referral letter sent; recipient acknowledges and replies",
    run: async () => {
      const { page, t } = await signedIn(USERS.optometrist);
      await t.click(nav(page, "Referrals"));
      await page.waitForURL((u) => u.pathname === "/referrals");
      await settle(page);
      await t.click(page.getByRole("link", { name: "New referral" }));
      await page.waitForURL((u) => u.pathname === "/referrals/new");
      await settle(page);
      const start = page.getByRole("link", { name: /^Start referral for / }).first();
      const who = (await start.textContent())!.replace(/^Start referral for /, "").trim();
      t.notes.push(`for ${who}`);
      await t.click(start);
      await page.waitForURL((u) => u.searchParams.has("exam"));
      await settle(page);
      await t.select(page.getByLabel("Send to"), { label: "Mr Lucan Ferreira-Holt, Brackenford Eye Unit" });
      await t.fill(page.getByLabel("Letter text"), LETTER);
      await t.click(page.getByRole("button", { name: "Save draft and preview" }).first());
      await page.waitForURL(/\/referrals\/[0-9a-f-]{36}/);
      await settle(page);
      const before = await mailLinks(RECIPIENT);
      await t.click(page.getByRole("button", { name: "Send letter" }));
      await page.getByText("Referral sent").first().waitFor();
      let link: string | undefined;
      await until(async () => {
        link = (await mailLinks(RECIPIENT)).find((l) => !before.includes(l));
        return Boolean(link);
      }, "the letter's e-mail");
      const optometrist = t;

      // The ophthalmologist, from the link in the e-mail (no account, nothing to sign in to).
      const context = await browser.newContext({ baseURL: BASE_URL, viewport: DESKTOP });
      const surgeon = await context.newPage();
      surgeon.setDefaultTimeout(20_000);
      await surgeon.goto(link!);
      await settle(surgeon);
      const r = new Tally(surgeon);
      const ack = surgeon.locator("form").filter({ has: surgeon.getByRole("button", { name: "Acknowledge receipt" }) });
      await r.fill(ack.getByLabel("Your name"), SURGEON);
      await r.click(ack.getByRole("button", { name: "Acknowledge receipt" }));
      await surgeon.getByText("receipt acknowledged").first().waitFor();
      await settle(surgeon);
      const reply = surgeon.locator("form").filter({ has: surgeon.getByRole("button", { name: "Send reply" }) });
      const name = reply.getByLabel("Your name");
      if ((await name.inputValue()) === "") await r.fill(name, SURGEON);
      await r.fill(reply.getByLabel("Short reply"), REPLY);
      await r.click(reply.getByRole("button", { name: "Send reply" }));
      await surgeon.getByText("your reply has been sent to the practice").first().waitFor();
      optometrist.notes.push(`of which the recipient: ${r.clicks} clicks, ${r.keys} keystrokes`);
      optometrist.clicks += r.clicks;
      optometrist.keys += r.keys;
      optometrist.fields += r.fields;
      optometrist.scrolls += r.scrolls;
      await context.close();
      return optometrist;
    },
  },
  {
    name: "8 Owner: opening hours and a closure day",
    run: async () => {
      const { page, t } = await signedIn(USERS.owner);
      await t.click(page.getByRole("link", { name: "Settings" }).first());
      await page.waitForURL((u) => u.pathname.startsWith("/settings"));
      await settle(page);
      await t.click(page.getByRole("link", { name: "Opening and closures" }));
      await page.waitForURL((u) => u.pathname === "/settings/closures");
      await settle(page);
      const day = await closableDay();
      await t.fill(page.getByLabel("Reason"), "Staff training");
      await t.fillDigits(page.getByLabel("First day"), day);
      await t.click(page.getByRole("button", { name: "Add closure" }));
      await page
        .getByRole("row", { name: /Staff training/ })
        .first()
        .waitFor();
      await settle(page);
      await t.click(page.getByRole("link", { name: "Change opening hours" }));
      await settle(page);
      if ((await page.getByLabel("Friday closes", { exact: true }).count()) === 0)
        await t.click(page.getByRole("link", { name: "Larkspur Lane" }).first());
      const friday = page.getByLabel("Friday closes", { exact: true });
      await friday.waitFor();
      const closes = (await friday.inputValue()) === "18:30" ? "19:00" : "18:30";
      await t.fillDigits(friday, closes);
      await t.click(page.getByRole("button", { name: "Save site" }));
      await until(
        async () =>
          (
            await q(
              "select 1 from site_opening_hours h join sites s on s.id = h.site_id where s.name = 'Larkspur Lane' and h.weekday = 5 and h.end_minute = $1",
              [Number(closes.slice(0, 2)) * 60 + Number(closes.slice(3))],
            )
          ).length === 1,
        "the hours saved",
      );
      t.notes.push(`Friday now closes ${closes}`);
      return t;
    },
  },
  {
    name: "9 Phone: portal sign-in, book a visit, pay an invoice",
    run: async () => {
      const label = await invoiceForPortalPatient();
      const { page, t } = await signedIn(USERS.patient, PHONE, true);
      await t.tap(page.getByRole("link", { name: "Book an eye exam" }));
      await page.waitForURL((u) => u.pathname === "/portal/book");
      await settle(page);
      await t.tap(main(page).locator('form[method="post"] button[type="submit"]').first());
      await settle(page);
      const confirm = page.getByRole("button", { name: "Book this visit" });
      const booked = page.getByTestId("toast").filter({ hasText: "Your visit is booked" });
      await until(
        async () => (await confirm.isVisible()) || (await booked.isVisible()),
        "a confirmation or the booking",
      );
      if (await confirm.isVisible()) await t.tap(confirm);
      await booked.waitFor();
      await settle(page);
      const invoices = page.getByRole("link", { name: "Invoices and payments" });
      if (!(await invoices.isVisible().catch(() => false)))
        await t.tap(page.getByRole("link", { name: "Back to my visits" }));
      await t.tap(invoices);
      await page.waitForURL((u) => u.pathname === "/portal/invoices");
      await settle(page);
      await t.tap(
        page
          .locator("li", { has: page.getByRole("heading", { name: `Invoice ${label}` }) })
          .getByRole("button", { name: /Pay/ }),
      );
      await page.waitForURL((u) => u.pathname.startsWith("/pay/"));
      await settle(page);
      await t.tap(main(page).getByRole("button", { name: /^Pay/ }).first());
      // The card form (the Stripe stand-in's checkout page; expiry and security code come filled in).
      await page.getByLabel("Card number").waitFor();
      await t.fill(page.getByLabel("Card number"), "4242424242424242");
      await t.tap(page.getByRole("button", { name: /^Pay / }));
      await page.waitForURL((u) => u.pathname.startsWith("/pay/"));
      await until(
        async () =>
          (
            await q<{ status: string }>("select status::text from invoices where number = $1", [Number(label.slice(4))])
          )[0]?.status === "paid",
        "the invoice paid",
      );
      t.notes.push("card number typed on the payment stand-in's page");
      return t;
    },
  },
  {
    name: "10 Tablet: move through the exam's sections, save one",
    run: async () => {
      const last = `Tablet${alpha}`;
      await q("insert into patients (first_name, last_name, date_of_birth) values ('Teodora', $1, date '1975-06-06')", [
        last,
      ]);
      await appointmentToday(last, "arrived");
      const name = `Teodora ${last}`;
      const { page, t } = await signedIn(USERS.optometrist, TABLET, true);
      await t.tap(page.getByRole("link", { name: new RegExp(`${name}\\s*: open the appointment`) }));
      await page.waitForURL((u) => u.pathname.startsWith("/schedule/appointments/"));
      await settle(page);
      await t.tap(page.getByRole("button", { name: `Start exam for ${name}` }));
      await page.waitForURL(/\/exams\/[0-9a-f-]{36}$/);
      await settle(page);
      const menu = page.getByRole("navigation", { name: "Exam sections" });
      for (const section of ["History", "Acuity", "Subjective", "Final", "IOP"]) {
        await t.tap(menu.getByRole("link", { name: new RegExp(`^${section}\\b`) }));
        await until(async () => (await page.evaluate(() => location.hash)) !== "", `${section} shown`);
        await page.waitForTimeout(300);
      }
      await t.fill(page.getByLabel("Right IOP (mmHg)"), "15");
      await t.select(page.getByLabel("Right IOP method", { exact: true }), "goldmann");
      await page.getByLabel("Right IOP (mmHg)").blur();
      await until(
        async () =>
          (
            await q(
              "select 1 from exam_iop i join exams e on e.id = i.exam_id join patients p on p.id = e.patient_id where p.last_name = $1",
              [last],
            )
          ).length > 0,
        "the IOP section saved",
      );
      t.notes.push("5 section jumps by the section menu, then the IOP section");
      return t;
    },
  },
];

async function runAll() {
  browser = await chromium.launch({
    executablePath: process.env.CHROMIUM_PATH ?? "/usr/bin/chromium",
    headless: true,
    args: ["--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage"],
  });
  const only = process.env.TASKS?.split(",").map(Number);
  const rows: { task: string; clicks: number; keys: number; fields: number; scrolls: number; note: string }[] = [];
  try {
    for (const [i, task] of tasks.entries()) {
      if (only && !only.includes(i + 1)) continue;
      try {
        const t = await task.run();
        rows.push({
          task: task.name,
          clicks: t.clicks,
          keys: t.keys,
          fields: t.fields,
          scrolls: t.scrolls,
          note: t.notes.join("; "),
        });
        await t.page.context().close();
      } catch (e) {
        if (process.env.WALK_DEBUG && lastPage) {
          console.log("failed at", lastPage.url(), (e as Error).message);
          await lastPage.screenshot({ path: join(tmpdir(), `walk-fail-${i + 1}.png`) }).catch(() => undefined);
        }
        rows.push({
          task: task.name,
          clicks: NaN,
          keys: NaN,
          fields: NaN,
          scrolls: NaN,
          note: `FAILED: ${(e as Error).message.split("\n")[0]}`,
        });
      }
      console.log(rows.at(-1));
    }
  } finally {
    await browser.close();
    await db.end();
  }
  console.log(`\nTen tasks against ${BASE_URL} (sign-in not counted)\n`);
  console.log("| task | clicks | keystrokes | fields typed into | scrolls to reach | note |");
  console.log("| --- | ---: | ---: | ---: | ---: | --- |");
  for (const r of rows) console.log(`| ${r.task} | ${r.clicks} | ${r.keys} | ${r.fields} | ${r.scrolls} | ${r.note} |`);
  if (rows.some((r) => Number.isNaN(r.clicks))) process.exitCode = 1;
}

await runAll();
