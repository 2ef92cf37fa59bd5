/**
 * Stateless app servers, proved: two app servers behind nginx (a real load balancer from Debian)
 * and two job workers, all on one fresh database, object store, mail and Stripe stand-in of their
 * own. A browser flow runs through the balancer while one app server and one worker are stopped
 * and restarted: the session survives, no request is lost (nginx retries a refused connection on
 * the other server), every upload reads the same from either server, and no e-mail or payment
 * happens twice.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import pg from "pg";
import { chromium, type Browser, type Page, type Response as PwResponse } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { addDays, localParts, startOfWeek } from "~/lib/scheduling/time";
import { BUILD_DIR, SCALE, TEMPLATE_DB } from "../support/ports";
import {
  cloneDatabase,
  ROOT,
  s3Env,
  startMailStandIn,
  startProcess,
  startS3StandIn,
  startStripeStandIn,
  stopProcess,
  waitForPort,
} from "../support/services";
import { CHROMIUM_ARGS, DEMO, DEMO_PASSWORD } from "./fixtures";

const NGINX = "/usr/sbin/nginx";
const balancer = `http://127.0.0.1:${SCALE.balancer}`;
const prefix = join(ROOT, ".tmp", `nginx-${SCALE.balancer}`);
const SLOW = { timeout: 20_000 };

let databaseUrl = "";
let db: pg.Client;
const services: ChildProcess[] = [];
const apps: (ChildProcess | undefined)[] = [undefined, undefined];
const workers: (ChildProcess | undefined)[] = [undefined, undefined];
let nginx: ChildProcess | undefined;
let browser: Browser;

function appEnv(i: number): Record<string, string> {
  return {
    NODE_ENV: "production",
    HOST: "127.0.0.1",
    PORT: String(SCALE.apps[i]),
    APP_URL: balancer,
    DATABASE_URL: databaseUrl,
    SMTP_PORT: String(SCALE.smtp),
    MAILBOX_API_URL: `http://127.0.0.1:${SCALE.mailApi}`,
    DIOPTRA_DEMO: "1",
    STRIPE_API_HOST: "127.0.0.1",
    STRIPE_API_PORT: String(SCALE.stripe),
    STRIPE_API_PROTOCOL: "http",
    ...s3Env(SCALE.s3),
  };
}

async function startApp(i: number) {
  apps[i] = startProcess(
    `app${i + 1}`,
    join(ROOT, "node_modules/.bin/react-router-serve"),
    [`${BUILD_DIR}/server/index.js`],
    appEnv(i),
  );
  await waitForPort(SCALE.apps[i]!, 150_000);
  if (nginx) await backInRotation(i);
}

/**
 * nginx keeps a server it saw fail out of rotation for `fail_timeout` (3 s), even once it is back.
 * A restarted server counts as restarted only when the balancer has sent it a request again;
 * otherwise stopping the other server straight after would leave nginx with no live upstream.
 */
async function backInRotation(i: number) {
  const port = SCALE.apps[i]!;
  const deadline = Date.now() + 30_000;
  for (;;) {
    await fetch(`${balancer}/favicon.svg`).catch(() => null);
    const last = upstreamsUsed().lines.at(-1) ?? "";
    const answeredBy = [...last.matchAll(/127\.0\.0\.1:(\d+)/g)].at(-1)?.[1];
    if (/ 200 /.test(last) && Number(answeredBy) === port) return;
    if (Date.now() > deadline) throw new Error(`the balancer never sent a request to app ${i + 1} again`);
    await new Promise((r) => setTimeout(r, 200));
  }
}

async function startWorker(i: number) {
  workers[i] = startProcess(`worker${i + 1}`, join(ROOT, "node_modules/.bin/tsx"), ["app/ops/worker.ts"], {
    DATABASE_URL: databaseUrl,
    SMTP_PORT: String(SCALE.smtp),
    APP_URL: balancer,
    WORKER_PORT: String(SCALE.workers[i]),
    WORKER_POLL_SECONDS: "0.5",
    ...s3Env(SCALE.s3),
  });
  await waitForPort(SCALE.workers[i]!, 150_000);
  // Healthy once its queues are worked.
  const deadline = Date.now() + 150_000;
  while ((await fetch(`http://127.0.0.1:${SCALE.workers[i]}/healthz`).catch(() => null))?.status !== 200) {
    if (Date.now() > deadline) throw new Error(`worker ${i + 1} is not working its queues`);
    await new Promise((r) => setTimeout(r, 250));
  }
}

async function stop(list: (ChildProcess | undefined)[], i: number) {
  await stopProcess(list[i]);
  list[i] = undefined;
}

/** nginx as a child process (no daemon) with its own config, prefix, logs and temp folders under .tmp. */
async function startNginx() {
  rmSync(prefix, { recursive: true, force: true });
  mkdirSync(join(prefix, "logs"), { recursive: true });
  const conf = `
daemon off;
worker_processes 1;
pid ${prefix}/nginx.pid;
error_log ${prefix}/logs/error.log warn;
events { worker_connections 256; }
http {
  access_log ${prefix}/logs/access.log;
  log_format upstreams '$request_method $uri $status $upstream_addr';
  client_body_temp_path ${prefix}/client_body;
  proxy_temp_path ${prefix}/proxy;
  fastcgi_temp_path ${prefix}/fastcgi;
  uwsgi_temp_path ${prefix}/uwsgi;
  scgi_temp_path ${prefix}/scgi;
  upstream dioptra {
    server 127.0.0.1:${SCALE.apps[0]} max_fails=1 fail_timeout=3s;
    server 127.0.0.1:${SCALE.apps[1]} max_fails=1 fail_timeout=3s;
    keepalive 8;
  }
  server {
    listen 127.0.0.1:${SCALE.balancer};
    client_max_body_size 20m;
    access_log ${prefix}/logs/upstreams.log upstreams;
    location / {
      proxy_pass http://dioptra;
      proxy_http_version 1.1;
      proxy_set_header Connection "";
      proxy_set_header Host $http_host;
      proxy_set_header X-Forwarded-For $proxy_add_x_forwarded_for;
      proxy_set_header X-Forwarded-Proto $scheme;
      # A server that refuses the connection (stopped) or drops it gets the request sent to the
      # other one. Only requests that did not reach an app are retried this way: with
      # proxy_next_upstream "error" a POST is re-sent only when nothing was received upstream.
      proxy_next_upstream error timeout http_502 non_idempotent;
      proxy_next_upstream_tries 2;
      proxy_connect_timeout 2s;
      proxy_read_timeout 60s;
    }
  }
}
`;
  writeFileSync(join(prefix, "nginx.conf"), conf);
  nginx = spawn(NGINX, ["-p", prefix, "-c", join(prefix, "nginx.conf"), "-e", join(prefix, "logs", "error.log")], {
    stdio: ["ignore", "pipe", "pipe"],
  });
  nginx.stderr?.on("data", (d: Buffer) => process.stderr.write(`[nginx] ${d}`));
  await waitForPort(SCALE.balancer, 15_000);
}

/** Upstream ports that answered requests, from nginx's log of `$upstream_addr`. */
function upstreamsUsed() {
  const lines = existsSync(join(prefix, "logs", "upstreams.log"))
    ? readFileSync(join(prefix, "logs", "upstreams.log"), "utf8")
        .trim()
        .split("\n")
    : [];
  return {
    lines,
    ports: new Set(lines.flatMap((l) => [...l.matchAll(/127\.0\.0\.1:(\d+)/g)].map((m) => Number(m[1])))),
  };
}

async function mailTo(to: string) {
  const list = (await (
    await fetch(`http://127.0.0.1:${SCALE.mailApi}/messages?to=${encodeURIComponent(to)}`)
  ).json()) as { id: string }[];
  return Promise.all(
    list.map(
      async (m) =>
        (await (await fetch(`http://127.0.0.1:${SCALE.mailApi}/messages/${m.id}`)).json()) as {
          id: string;
          subject: string;
          text: string;
        },
    ),
  );
}

async function page() {
  const context = await browser.newContext({ baseURL: balancer, viewport: { width: 1280, height: 1000 } });
  const p = await context.newPage();
  p.setDefaultTimeout(20_000);
  return p;
}

/** Every response the browser got: none may be a server error, whatever was stopped meanwhile. */
function watch(p: Page, seen: { url: string; status: number }[]) {
  p.on("response", (r: PwResponse) => seen.push({ url: r.url(), status: r.status() }));
}

async function signIn(p: Page, email: string) {
  await p.goto("/login");
  await p.waitForLoadState("networkidle");
  await p.getByLabel("E-mail").fill(email);
  await p.getByLabel("Password").fill(DEMO_PASSWORD);
  await p.getByRole("button", { name: "Sign in" }).click();
  await p.waitForURL((u) => u.pathname === "/");
}

beforeAll(async () => {
  if (!existsSync(NGINX))
    throw new Error("nginx is not installed: npm test installs Debian's nginx-light (app/ops/test.sh).");
  // A copy of the run's seeded template (tests/support/services.ts), with its job queues.
  databaseUrl = await cloneDatabase(TEMPLATE_DB, SCALE.db);
  db = new pg.Client({ connectionString: databaseUrl });
  await db.connect();
  services.push(await startMailStandIn(SCALE.smtp, SCALE.mailApi));
  services.push(await startS3StandIn(SCALE.s3));
  services.push(await startStripeStandIn(SCALE.stripe, `${balancer}/api/webhooks/stripe`));
  await Promise.all([startApp(0), startApp(1)]);
  await Promise.all([startWorker(0), startWorker(1)]);
  await startNginx();
  browser = await chromium.launch({
    executablePath: process.env.CHROMIUM_PATH ?? "/usr/bin/chromium",
    headless: true,
    args: CHROMIUM_ARGS,
  });
}, 600_000);

afterAll(async () => {
  await browser?.close();
  if (nginx && nginx.exitCode === null) {
    nginx.kill("SIGQUIT");
    await new Promise((r) => setTimeout(r, 300));
    if (nginx.exitCode === null) nginx.kill("SIGKILL");
  }
  await Promise.all([stop(apps, 0), stop(apps, 1), stop(workers, 0), stop(workers, 1)]);
  for (const s of services) await stopProcess(s);
  await db?.end();
});

describe("two app servers and two workers behind nginx", () => {
  it("sign in, book, upload, invoice and pay, remind: with a server and a worker stopped and restarted mid-flow", async () => {
    const seen: { url: string; status: number }[] = [];
    const [patient] = (
      await db.query<{ id: string }>("select patient_id as id from users where email = $1", [DEMO.patient])
    ).rows;
    const [optom] = (await db.query<{ id: string }>("select id from users where email = $1", [DEMO.optometrist])).rows;

    // 1. Sign in through the balancer.
    const desk = await page();
    watch(desk, seen);
    await signIn(desk, DEMO.receptionist);

    // 2. Mid-flow, app server 1 and worker 1 stop. The same session books through server 2.
    await Promise.all([stop(apps, 0), stop(workers, 0)]);
    // Past the demo diary's booked fortnight, so 10:00 is free.
    const monday = startOfWeek(addDays(localParts(new Date(), "Europe/London").date, 21));
    await desk.goto(`/schedule/book?patientId=${patient!.id}&provider=${optom!.id}&start=${monday}T10:00`);
    await desk.waitForLoadState("networkidle");
    await desk.getByRole("button", { name: "Book appointment" }).click();
    await desk.waitForURL((u) => u.pathname === "/schedule", SLOW);
    const [appt] = (
      await db.query<{ id: string }>(
        "select id from appointments where patient_id = $1 and starts_at::date = $2::date and status = 'booked'",
        [patient!.id, monday],
      )
    ).rows;
    expect(appt).toBeTruthy();
    // The confirmation goes out from worker 2 alone.
    await expect
      .poll(
        async () => (await mailTo(DEMO.patient)).filter((m) => m.subject.startsWith("Appointment booked")).length,
        SLOW,
      )
      .toBe(1);

    // 3. Server 1 and worker 1 come back; server 2 stops. The desk's session works on server 1.
    await Promise.all([startApp(0), startWorker(0)]);
    await stop(apps, 1);
    await desk.goto("/schedule/day");
    expect(new URL(desk.url()).pathname).toBe("/schedule/day");

    // 4. The optometrist uploads a document (server 1 only is up), then server 2 returns.
    const clinic = await page();
    watch(clinic, seen);
    await signIn(clinic, DEMO.optometrist);
    const pdf = Buffer.from(`%PDF-1.4\n% scale-out upload ${Date.now()}\n%%EOF\n`);
    const upload = await clinic.request.post("/api/uploads", {
      multipart: {
        patientId: patient!.id,
        kind: "outside_record",
        description: "Letter from the hospital",
        file: { name: "letter.pdf", mimeType: "application/pdf", buffer: pdf },
      },
    });
    expect(upload.status()).toBe(201);
    const { id: docId } = (await upload.json()) as { id: string };
    await startApp(1);
    // Readable from either server, and through the balancer, with the same session.
    const cookie = (await clinic.context().cookies()).map((c) => `${c.name}=${c.value}`).join("; ");
    for (const port of SCALE.apps) {
      const res = await fetch(`http://127.0.0.1:${port}/patients/${patient!.id}/documents/${docId}/file`, {
        headers: { cookie },
      });
      expect(res.status).toBe(200);
      expect(Buffer.from(await res.arrayBuffer()).equals(pdf)).toBe(true);
    }
    for (let k = 0; k < 4; k++) {
      const res = await clinic.request.get(`/patients/${patient!.id}/documents/${docId}/file`);
      expect(Buffer.from(await res.body()).equals(pdf)).toBe(true);
    }

    // 5. An invoice raised and issued at the desk; worker 2 stops, so worker 1 sends what is queued.
    await stop(workers, 1);
    await desk.goto("/billing/invoices/new");
    await desk.waitForLoadState("networkidle");
    // The patient field searches the whole register as you type.
    await desk.getByRole("combobox", { name: "Patient" }).fill("Achterberg Rosalind");
    await desk
      .getByRole("option", { name: new RegExp(`^${"Achterberg, Rosalind"}`) })
      .first()
      .click();
    await expect.poll(() => desk.getByTestId("chosen-patient").textContent()).toContain("Achterberg, Rosalind");
    await desk.getByLabel("Quantity of Contact lens aftercare check").fill("1");
    await desk.getByRole("button", { name: "Create draft invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Draft invoice created");
    await desk.getByRole("button", { name: "Issue invoice" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toMatch(/Issued as/);
    const invoiceId = new URL(desk.url()).pathname.split("/").pop()!;
    await desk.getByRole("button", { name: "E-mail invoice with payment link" }).click();
    await expect.poll(() => desk.getByTestId("toast").textContent(), SLOW).toContain("Invoice e-mailed");
    await startWorker(1);

    // 6. The patient pays on the stand-in's checkout page; server 1 stops before the card is sent,
    //    so the signed webhook lands on server 2 through the balancer.
    await expect
      .poll(async () => (await mailTo(DEMO.patient)).some((m) => m.subject.startsWith("Invoice ")), SLOW)
      .toBe(true);
    const invoiceMail = (await mailTo(DEMO.patient)).find((m) => m.subject.startsWith("Invoice "))!;
    const payLink = invoiceMail.text.match(/https?:\/\/\S+\/pay\/\S+/)![0];
    expect(payLink.startsWith(balancer)).toBe(true);
    const payer = await page();
    watch(payer, seen);
    await payer.goto(payLink);
    await payer.waitForLoadState("networkidle");
    await payer.getByRole("button", { name: "Pay £30.00 by card" }).click();
    await payer.waitForURL((u) => u.port === String(SCALE.stripe) && u.pathname.startsWith("/checkout/"), SLOW);
    await payer.getByLabel("Card number").fill("4242 4242 4242 4242");
    await stop(apps, 0);
    await payer.getByRole("button", { name: /^Pay £30.00/ }).click();
    await payer.waitForURL((u) => u.pathname.startsWith("/pay/") && u.searchParams.get("checkout") === "done", SLOW);
    await expect
      .poll(
        async () => (await db.query("select status from invoices where id = $1", [invoiceId])).rows[0]?.status,
        SLOW,
      )
      .toBe("paid");
    await startApp(0);

    // The same payment event delivered again (as Stripe may) through the balancer changes nothing.
    const events = (await (await fetch(`http://127.0.0.1:${SCALE.stripe}/_standin/events`)).json()) as {
      id: string;
      type: string;
    }[];
    const completed = events.find((e) => e.type === "checkout.session.completed")!;
    await fetch(`http://127.0.0.1:${SCALE.stripe}/_standin/events/${completed.id}/deliver`, { method: "POST" });
    const payments = (await db.query("select status, amount_minor from payments where invoice_id = $1", [invoiceId]))
      .rows;
    expect(payments).toEqual([{ status: "succeeded", amount_minor: 3000 }]);
    await expect
      .poll(async () => (await mailTo(DEMO.patient)).filter((m) => /^Receipt/.test(m.subject)).length, SLOW)
      .toBe(1);

    // 7. The reminder: its due time is brought to now (the clock jump stands in for waiting a day);
    //    both workers are running and exactly one of them sends it, once.
    await db.query("update appointment_messages set due_at = now() where appointment_id = $1 and kind = 'reminder'", [
      appt!.id,
    ]);
    await db.query(
      "update pgboss.job set start_after = now() where data->>'messageId' = (select id::text from appointment_messages where appointment_id = $1 and kind = 'reminder')",
      [appt!.id],
    );
    await expect
      .poll(async () => (await mailTo(DEMO.patient)).filter((m) => m.subject.startsWith("Reminder:")).length, {
        timeout: 30_000,
      })
      .toBe(1);
    // Give both workers time to (wrongly) send again, then count every message once more.
    await new Promise((r) => setTimeout(r, 3000));
    const all = await mailTo(DEMO.patient);
    expect(all.filter((m) => m.subject.startsWith("Reminder:"))).toHaveLength(1);
    expect(all.filter((m) => m.subject.startsWith("Appointment booked"))).toHaveLength(1);
    expect(all.filter((m) => m.subject.startsWith("Invoice "))).toHaveLength(1);
    const sent = (
      await db.query("select kind, status from appointment_messages where appointment_id = $1 order by kind", [
        appt!.id,
      ])
    ).rows;
    expect(sent).toEqual([
      { kind: "confirmation", status: "sent" },
      { kind: "reminder", status: "sent" },
    ]);

    // No request the browser made was lost: no server error and no bad gateway, and both servers answered.
    expect(seen.filter((r) => r.status >= 500)).toEqual([]);
    const { ports, lines } = upstreamsUsed();
    expect(ports.has(SCALE.apps[0]!) && ports.has(SCALE.apps[1]!)).toBe(true);
    expect(lines.filter((l) => / 50[234] /.test(l))).toEqual([]);
  }, 600_000);
});
