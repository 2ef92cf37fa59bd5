/**
 * HTTP-level hardening against the production build: security headers and a CSP whose nonce
 * lets React Router hydrate; route headers reaching the document; host names; the JSON API's
 * problem details; sign-out and sign-in with bodies that are not forms; the patients search box
 * as a valid ARIA 1.2 combobox, checked with html-validate and axe-core.
 */
import { request as httpRequest } from "node:http";
import { HtmlValidate } from "html-validate";
import { describe, expect, it } from "vitest";
import { baseUrl, DEMO, DEMO_PASSWORD, expectAccessible, signIn, useBrowser } from "./fixtures";

const browser = useBrowser();

async function sessionCookie(email: string = DEMO.receptionist) {
  const res = await fetch(`${baseUrl()}/login`, {
    method: "POST",
    body: new URLSearchParams({ email, password: DEMO_PASSWORD }),
    redirect: "manual",
  });
  expect(res.status).toBe(302);
  return res.headers.get("set-cookie")!.split(";")[0]!;
}

/** A raw HTTP request, so the Host header can be anything (fetch always sends the URL's host). */
function raw(
  path: string,
  opts: { method?: string; headers?: Record<string, string>; body?: string } = {},
): Promise<{ status: number; headers: Record<string, string | string[] | undefined>; body: string }> {
  const url = new URL(baseUrl());
  return new Promise((resolve, reject) => {
    const req = httpRequest(
      { host: url.hostname, port: url.port, path, method: opts.method ?? "GET", headers: opts.headers },
      (res) => {
        let body = "";
        res.setEncoding("utf8");
        res.on("data", (c: string) => (body += c));
        res.on("end", () => resolve({ status: res.statusCode!, headers: res.headers, body }));
      },
    );
    req.on("error", reject);
    if (opts.body) req.write(opts.body);
    req.end();
  });
}

describe("security headers", () => {
  it("sends a nonce CSP, frame protection, nosniff, a referrer policy and no-store on pages, and the page still hydrates", async () => {
    const res = await fetch(`${baseUrl()}/login`);
    const csp = res.headers.get("content-security-policy")!;
    const nonce = /'nonce-([^']+)'/.exec(csp)?.[1];
    expect(nonce).toBeTruthy();
    expect(csp).toContain("frame-ancestors 'self'");
    expect(csp).not.toContain("'unsafe-inline' 'nonce");
    expect(csp).toMatch(/script-src 'self' 'nonce-[^']+'(;|$)/);
    expect(res.headers.get("x-frame-options")).toBe("SAMEORIGIN");
    expect(res.headers.get("x-content-type-options")).toBe("nosniff");
    expect(res.headers.get("referrer-policy")).toBe("strict-origin-when-cross-origin");
    expect(res.headers.get("cache-control")).toBe("no-store");
    const html = await res.text();
    // Every inline script carries this response's nonce.
    const scripts = [...html.matchAll(/<script(?![^>]*\bsrc=)([^>]*)>/g)].map((m) => m[1]!);
    expect(scripts.length).toBeGreaterThan(0);
    for (const attrs of scripts) expect(attrs).toContain(`nonce="${nonce}"`);
    // A second response gets another nonce.
    expect((await fetch(`${baseUrl()}/login`)).headers.get("content-security-policy")).not.toContain(nonce!);

    const page = await browser.newPage();
    const violations: string[] = [];
    page.on("console", (m) => {
      if (/Content Security Policy|Refused to/i.test(m.text())) violations.push(m.text());
    });
    await page.goto("/login");
    await expect
      .poll(
        () =>
          page.evaluate(() =>
            Boolean((window as unknown as { __reactRouterRouteModules?: unknown }).__reactRouterRouteModules),
          ),
        { timeout: 15_000 },
      )
      .toBe(true);
    // Client-side navigation works: the app is hydrated under the policy.
    await page.getByRole("link", { name: "Forgotten your password?" }).click();
    await page.waitForURL("**/forgot-password");
    await signIn(page, DEMO.receptionist);
    await page.waitForURL((u) => u.pathname === "/");
    expect(violations).toEqual([]);
  });

  it("keeps patient files out of caches and gives JSON nosniff", async () => {
    const cookie = await sessionCookie();
    const api = await fetch(`${baseUrl()}/api/patients?q=ros`, { headers: { cookie } });
    expect(api.status).toBe(200);
    expect(api.headers.get("cache-control")).toBe("no-store");
    expect(api.headers.get("x-content-type-options")).toBe("nosniff");
    const chart = await fetch(`${baseUrl()}/patients`, { headers: { cookie } });
    expect(chart.headers.get("cache-control")).toBe("no-store");
  });

  it("lets a route's own headers reach the document: the recipient link page is no-referrer and no-store", async () => {
    const res = await fetch(`${baseUrl()}/r/not-a-real-token`);
    expect(res.status).toBe(404);
    expect(res.headers.get("referrer-policy")).toBe("no-referrer");
    expect(res.headers.get("cache-control")).toBe("no-store");
  });
});

describe("host names", () => {
  it("answers only for the configured host; a spoofed Host is refused, also when the Origin matches it", async () => {
    const own = new URL(baseUrl()).host;
    expect((await raw("/login", { headers: { host: own } })).status).toBe(200);
    const spoofed = await raw("/login", { headers: { host: "evil.example" } });
    expect(spoofed.status).toBe(421);
    expect(spoofed.body).toMatch(/does not answer for the host name evil\.example/);
    const post = await raw("/login", {
      method: "POST",
      headers: {
        host: "evil.example",
        origin: "http://evil.example",
        "content-type": "application/x-www-form-urlencoded",
      },
      body: new URLSearchParams({ email: DEMO.owner, password: DEMO_PASSWORD }).toString(),
    });
    expect(post.status).toBe(421);
    expect(post.headers["set-cookie"]).toBeUndefined();
    expect((await raw("/api/patients", { headers: { host: "attacker.test:80" } })).status).toBe(421);
  });
});

describe("the JSON API's errors", () => {
  const problemOf = async (res: Response) => {
    expect(res.headers.get("content-type")).toMatch(/^application\/problem\+json/);
    return (await res.json()) as {
      type: string;
      title: string;
      status: number;
      detail: string;
      fieldErrors?: Record<string, string[]>;
    };
  };

  it("answers unknown API paths with a JSON 404", async () => {
    const cookie = await sessionCookie();
    const res = await fetch(`${baseUrl()}/api/no-such-thing/42`, { headers: { cookie } });
    expect(res.status).toBe(404);
    expect(await problemOf(res)).toMatchObject({
      type: "about:blank",
      title: "Not Found",
      status: 404,
      detail: expect.stringContaining("/api/no-such-thing/42"),
    });
  });

  it("answers a method the route does not take with 405 and Allow", async () => {
    const cookie = await sessionCookie();
    const res = await fetch(`${baseUrl()}/api/patients`, { method: "DELETE", headers: { cookie } });
    expect(res.status).toBe(405);
    expect(res.headers.get("allow")).toBe("GET, HEAD");
    expect(await problemOf(res)).toMatchObject({ status: 405 });
    const put = await fetch(`${baseUrl()}/api/appointments`, {
      method: "PUT",
      headers: { cookie, "content-type": "application/json" },
      body: "{}",
    });
    expect(put.status).toBe(405);
    expect(put.headers.get("allow")).toBe("GET, HEAD, POST");
  });

  it("gives 401, 400 and field errors as problem details", async () => {
    const anon = await fetch(`${baseUrl()}/api/patients?q=a`);
    expect(anon.status).toBe(401);
    expect(await problemOf(anon)).toMatchObject({ status: 401, title: "Unauthorized", detail: "Sign in first." });
    const cookie = await sessionCookie();
    const bad = await fetch(`${baseUrl()}/api/appointments`, {
      method: "POST",
      headers: { cookie, "content-type": "application/json" },
      body: JSON.stringify({ patientId: 5, start: "0000-01-01" }),
    });
    expect(bad.status).toBe(400);
    const p = await problemOf(bad);
    expect(p.status).toBe(400);
    expect(Object.keys(p.fieldErrors ?? {})).toEqual(expect.arrayContaining(["patientId", "start"]));
    const impossible = await fetch(`${baseUrl()}/api/appointments?start=0000-01-01&end=2026-02-30`, {
      headers: { cookie },
    });
    expect(impossible.status).toBe(400);
    expect((await problemOf(impossible)).fieldErrors?.end?.[0]).toMatch(
      /not a date and time we can read|does not exist/,
    );
    const broken = await fetch(`${baseUrl()}/api/appointments`, {
      method: "POST",
      headers: { cookie, "content-type": "application/json" },
      body: "{",
    });
    expect(broken.status).toBe(400);
    expect((await problemOf(broken)).detail).toBe("The body is not valid JSON.");
  });
});

describe("bodies that are not forms", () => {
  it("signs out on a POST to /logout without a body, and with a JSON body", async () => {
    for (const init of [
      {},
      { headers: { "content-type": "application/json" }, body: "{}" },
      { headers: { "content-type": "text/plain" }, body: "bye" },
    ]) {
      const cookie = await sessionCookie();
      const out = await fetch(`${baseUrl()}/logout`, {
        method: "POST",
        redirect: "manual",
        ...init,
        headers: { cookie, ...(init.headers ?? {}) },
      });
      expect(out.status).toBe(302);
      expect(out.headers.get("location")).toBe("/login");
      // The old cookie no longer opens anything.
      const after = await fetch(`${baseUrl()}/patients`, { headers: { cookie }, redirect: "manual" });
      expect(after.status).toBe(302);
      expect(after.headers.get("location")).toMatch(/^\/login/);
    }
  });

  it("answers /login with JSON, text, an empty body or a NUL byte with a 4xx that says why", async () => {
    const json = await fetch(`${baseUrl()}/login`, {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify({ email: DEMO.owner, password: DEMO_PASSWORD }),
    });
    expect(json.status).toBe(415);
    expect(await json.text()).toMatch(/takes a form/);
    const empty = await fetch(`${baseUrl()}/login`, { method: "POST" });
    expect(empty.status).toBe(400);
    const nul = await fetch(`${baseUrl()}/patients/new`, {
      method: "POST",
      headers: { cookie: await sessionCookie(), "content-type": "application/x-www-form-urlencoded" },
      body: "firstName=A%00B&lastName=C&dateOfBirth=1980-01-01",
    });
    expect(nul.status).toBe(400);
    expect(await nul.text()).toMatch(/"firstName" contains a NUL character/);
    const takings = await fetch(`${baseUrl()}/billing/takings?day=2026-02-30`, {
      headers: { cookie: await sessionCookie(DEMO.owner) },
      redirect: "manual",
    });
    expect(takings.status).toBeLessThan(500);
  });
});

describe("patients search box", () => {
  it("is a valid ARIA 1.2 combobox: html-validate and axe-core find nothing, before and while the list is open", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.receptionist);
    await page.waitForURL((u) => u.pathname === "/");
    await page.goto("/patients");
    await expect
      .poll(
        () =>
          page.evaluate(() =>
            Boolean((window as unknown as { __reactRouterRouteModules?: unknown }).__reactRouterRouteModules),
          ),
        { timeout: 15_000 },
      )
      .toBe(true);
    const box = page.getByRole("combobox", { name: "Find a patient" });
    const validator = new HtmlValidate({
      extends: ["html-validate:recommended"],
      rules: {
        // Tailwind's utility classes and React's markup choices, not errors of the document.
        "no-inline-style": "off",
        "attribute-boolean-style": "off",
        "attribute-empty-style": "off",
        "no-trailing-whitespace": "off",
        "void-style": "off",
        "no-redundant-role": "error",
        // The ARIA combobox pattern's popup is a listbox by design (a <select> cannot be typed into).
        "prefer-native-element": ["error", { exclude: ["listbox"] }],
        "valid-id": ["error", { relaxed: false }],
      },
    });
    const check = async () => {
      const report = await validator.validateString(await page.content());
      return report.results.flatMap((r) => r.messages.map((m) => `${m.ruleId}: ${m.message} (${m.selector ?? ""})`));
    };
    expect(await check()).toEqual([]);
    const listId = await box.getAttribute("aria-controls");
    expect(await page.locator(`#${listId}`).count()).toBe(1);
    expect(await box.getAttribute("type")).toBe("text");
    await box.fill("sorrell-am");
    await expect.poll(() => box.getAttribute("aria-expanded"), { timeout: 15_000 }).toBe("true");
    await expect.poll(() => page.getByRole("option").count(), { timeout: 15_000 }).toBeGreaterThan(0);
    await box.press("ArrowDown");
    const active = await box.getAttribute("aria-activedescendant");
    expect(await page.locator(`#${active}`).getAttribute("role")).toBe("option");
    expect(await check()).toEqual([]);
    await expectAccessible(page);
    await box.press("Escape");
    await expect.poll(() => box.getAttribute("aria-expanded"), { timeout: 15_000 }).toBe("false");
    expect(await page.locator(`#${listId}`).count()).toBe(1);
  });
});
