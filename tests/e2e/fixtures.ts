/**
 * Browser fixtures: Debian's Chromium driven by playwright-core (never a downloaded browser),
 * sign-in as a demo role, the mailbox of the mail stand-in, and an axe-core check.
 */
import { randomBytes } from "node:crypto";
import { createRequire } from "node:module";
import { join } from "node:path";
import pg from "pg";
import { chromium, type Browser, type BrowserContext, type Page } from "playwright-core";
import { createCookie } from "react-router";
import { afterAll, beforeAll, expect, inject } from "vitest";

const require = createRequire(import.meta.url);
const axeSource: string = (require("axe-core") as { source: string }).source;

export const baseUrl = () => inject("baseUrl");
export const DEMO = {
  owner: "owner@dioptra-demo.test",
  optometrist: "optometrist@dioptra-demo.test",
  receptionist: "reception@dioptra-demo.test",
  patient: "patient@dioptra-demo.test",
} as const;
export const DEMO_PASSWORD = "demo-password";

export const CHROMIUM_ARGS = [
  "--no-sandbox",
  "--disable-gpu",
  "--disable-dev-shm-usage",
  "--disable-background-networking",
  "--disable-component-update",
  "--disable-sync",
  "--disable-quic",
  "--no-first-run",
  // Less work per page on a machine without a GPU: compositing in the browser process, no
  // services a test never uses. About a tenth off a long browser file on two cores.
  "--in-process-gpu",
  "--disable-gpu-compositing",
  "--disable-features=Translate,OptimizationHints,MediaRouter,PaintHolding",
  "--disable-renderer-backgrounding",
  "--disable-ipc-flooding-protection",
  "--disable-hang-monitor",
  "--disable-breakpad",
  "--mute-audio",
  "--disable-smooth-scrolling",
];

/**
 * One browser per test file; a fresh context (cookies, storage) per `newPage`.
 * playwright-core launches with a new, empty temporary profile of its own each time.
 */
export function useBrowser() {
  let browser: Browser;
  const contexts: BrowserContext[] = [];
  beforeAll(async () => {
    browser = await chromium.launch({
      executablePath: process.env.CHROMIUM_PATH ?? "/usr/bin/chromium",
      headless: true,
      args: CHROMIUM_ARGS,
    });
  });
  afterAll(async () => {
    await Promise.all(contexts.map((c) => c.close().catch(() => undefined)));
    await browser?.close();
  });
  return {
    async newPage(options: { viewport?: { width: number; height: number } } = {}): Promise<Page> {
      const context = await browser.newContext({
        baseURL: baseUrl(),
        viewport: options.viewport ?? { width: 1280, height: 900 },
        acceptDownloads: true,
      });
      contexts.push(context);
      const page = await context.newPage();
      page.setDefaultTimeout(15_000);
      return page;
    },
  };
}

/**
 * Signs `page`'s browser context in as `email` and opens that user's home page. With the demo
 * password it creates the session directly: a `sessions` row in the stack's database and the
 * signed cookie the app would have set (the sign-in form itself is tested by foundation.e2e.ts).
 * Any other password goes through the form, so tests of wrong passwords still see the form's answer.
 */
export async function signIn(page: Page, email: string, password = DEMO_PASSWORD) {
  if (password !== DEMO_PASSWORD) return signInWithForm(page, email, password);
  const value = await sessionCookieValue(email);
  await page
    .context()
    .addCookies([{ name: "dioptra_session", value, url: baseUrl(), httpOnly: true, sameSite: "Lax" }]);
  await page.goto("/");
}

/** Signs in by filling in and sending the login form, as a person would. */
export async function signInWithForm(page: Page, email: string, password = DEMO_PASSWORD) {
  await page.goto("/login");
  await page.getByLabel("E-mail").fill(email);
  await page.getByLabel("Password").fill(password);
  await page.getByRole("button", { name: "Sign in" }).click();
}

let pool: pg.Pool | undefined;
/** A connection pool to this test file's database (its idle connections never keep the file's process alive). */
export function testDb(): pg.Pool {
  pool ??= new pg.Pool({
    connectionString: inject("e2eDatabaseUrl"),
    max: 2,
    allowExitOnIdle: true,
    idleTimeoutMillis: 5_000,
  });
  return pool;
}

/** A new session of the active user `email`, as the `dioptra_session` cookie's signed value. */
export async function sessionCookieValue(email: string): Promise<string> {
  const { rows } = await testDb().query<{ id: string }>(
    "select id from users where lower(email) = lower($1) and active",
    [email],
  );
  if (!rows[0]) throw new Error(`no active user ${email}`);
  const id = randomBytes(32).toString("base64url");
  await testDb().query(
    "insert into sessions (id, user_id, expires_at, user_agent, ip) values ($1, $2, now() + interval '12 hours', 'browser test', '127.0.0.1')",
    [id, rows[0].id],
  );
  // Signed as app/utils/session.server.ts signs it, with the stack's secret.
  const cookie = createCookie("dioptra_session", { path: "/", secrets: [inject("sessionSecret")] });
  const header = await cookie.serialize(id);
  return header.slice("dioptra_session=".length, header.indexOf(";"));
}

/** Runs axe-core in the page; fails on serious or critical violations, naming them. */
export async function expectAccessible(page: Page) {
  await page.evaluate(axeSource);
  const result = (await page.evaluate(async () => {
    const axe = (
      window as unknown as {
        axe: {
          run: (
            ctx: Document,
            opts: unknown,
          ) => Promise<{ violations: { id: string; impact: string; help: string; nodes: { target: string[] }[] }[] }>;
        };
      }
    ).axe;
    return axe.run(document, { resultTypes: ["violations"] });
  })) as { violations: { id: string; impact: string; help: string; nodes: { target: string[] }[] }[] };
  const serious = result.violations.filter((v) => v.impact === "serious" || v.impact === "critical");
  expect(
    serious.map((v) => `${v.impact}: ${v.id} (${v.help}) at ${v.nodes.map((n) => n.target.join(" ")).join(", ")}`),
  ).toEqual([]);
}

/** Messages in the mail stand-in addressed to `to`, newest first (full bodies). */
export async function mailTo(to: string) {
  const port = inject("mailApiPort");
  const list = (await (await fetch(`http://127.0.0.1:${port}/messages?to=${encodeURIComponent(to)}`)).json()) as {
    id: string;
  }[];
  return Promise.all(
    list.map(
      async (m) =>
        (await (await fetch(`http://127.0.0.1:${port}/messages/${m.id}`)).json()) as {
          id: string;
          subject: string;
          text: string;
          attachments: { index: number; filename: string }[];
        },
    ),
  );
}

export async function screenshot(page: Page, name: string) {
  if (process.env.E2E_SCREENSHOTS)
    await page.screenshot({ path: join(process.env.E2E_SCREENSHOTS, `${name}.png`), fullPage: true });
}
