import { describe, expect, it } from "vitest";
import { baseUrl, DEMO, expectAccessible, mailTo, screenshot, signIn, signInWithForm, useBrowser } from "./fixtures";

const browser = useBrowser();

describe("sign-in and roles in the browser", () => {
  // The one test that signs in through the form with the right password; every other browser
  // test starts from a session created in the database (fixtures.ts `signIn`).
  it("signs in through the login form and lands on the home page", async () => {
    const page = await browser.newPage();
    await signInWithForm(page, DEMO.owner);
    await page.waitForURL((url) => url.pathname === "/");
    await expect
      .poll(() => page.getByRole("heading", { level: 1 }).textContent())
      .toMatch(/Today at Larkspur Lane Eye Care/);
    const cookies = await page.context().cookies();
    expect(cookies.find((c) => c.name === "dioptra_session")).toMatchObject({ httpOnly: true, sameSite: "Lax" });
  });

  it.each([
    ["owner", DEMO.owner, "/", /Today at Larkspur Lane Eye Care/],
    ["optometrist", DEMO.optometrist, "/", /Today at Larkspur Lane Eye Care/],
    ["receptionist", DEMO.receptionist, "/", /Today at Larkspur Lane Eye Care/],
    ["patient", DEMO.patient, "/portal", /Hello, Rosalind/],
  ])("signs in as %s and lands on that role's home", async (role, email, path, heading) => {
    const page = await browser.newPage();
    await signIn(page, email);
    await page.waitForURL((url) => url.pathname === path);
    await expect.poll(() => page.getByRole("heading", { level: 1 }).textContent()).toMatch(heading);
    const nav = await page.getByRole("navigation", { name: "Main" }).textContent();
    if (role === "owner") expect(nav).toContain("Practice settings");
    else expect(nav).not.toContain("Practice settings");
    await expectAccessible(page);
    await screenshot(page, `home-${role}`);
  });

  it("shows a receptionist the 403 page on an owner-only page", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.receptionist);
    await page.waitForURL("**/");
    const res = await page.goto("/settings/users");
    expect(res?.status()).toBe(403);
    await expect.poll(() => page.getByRole("heading", { level: 1 }).textContent()).toBe("No access to this page");
    await expectAccessible(page);
  });

  it("shows the 404 page for an unknown address", async () => {
    const page = await browser.newPage();
    await signIn(page, DEMO.optometrist);
    await page.waitForURL("**/");
    const res = await page.goto("/no-such-page");
    expect(res?.status()).toBe(404);
    expect(await page.getByRole("heading", { level: 1 }).textContent()).toBe("Page not found");
  });

  it("says so when the password is wrong, and the login page is accessible", async () => {
    const page = await browser.newPage();
    await page.goto("/login");
    await expectAccessible(page);
    await signIn(page, DEMO.optometrist, "wrong-password");
    await expect.poll(() => page.getByRole("alert").textContent()).toContain("do not match an active account");
    await expectAccessible(page);
    await screenshot(page, "login-error");
  });

  it("throttles repeated failures with a clear message", async () => {
    const page = await browser.newPage();
    for (let i = 0; i < 5; i++) {
      await signIn(page, "locked-out@dioptra-demo.test", `guess-${i}`);
      await expect.poll(() => page.getByRole("alert").textContent()).toContain("do not match");
    }
    await signIn(page, "locked-out@dioptra-demo.test", "guess-again");
    await expect.poll(() => page.getByRole("alert").textContent()).toContain("Too many failed sign-in attempts");
  });

  it("invites a colleague, who sets a password; later resets it through the mailbox page and signs out", async () => {
    const email = `nia.farrow.${Date.now()}@dioptra-demo.test`;
    const owner = await browser.newPage();
    await signIn(owner, DEMO.owner);
    await owner.waitForURL("**/");
    await owner.goto("/settings/users");
    await expectAccessible(owner);
    const invite = owner.locator("form#invite");
    await invite.getByLabel("Name").fill("Nia Farrow");
    await invite.getByLabel("E-mail").fill(email);
    await invite.getByLabel("Role").selectOption("optometrist");
    await invite.getByRole("button", { name: "Send invitation" }).click();
    await expect.poll(() => owner.getByTestId("toast").textContent()).toContain(`Invitation sent to ${email}`);
    // The message sits in the page's flow above what it reports on, never over it.
    const [toastBox, formBox] = await Promise.all([owner.getByTestId("toast").boundingBox(), invite.boundingBox()]);
    expect(toastBox!.y + toastBox!.height).toBeLessThanOrEqual(formBox!.y);
    await screenshot(owner, "settings-users");

    // The invitee opens the link from the demo mailbox page.
    const nia = await browser.newPage();
    await nia.goto("/dev/mailbox");
    await expectAccessible(nia);
    await nia
      .getByRole("link", { name: /You have been invited to Dioptra/ })
      .first()
      .click();
    await nia.getByRole("link", { name: /reset-password\?token=/ }).click();
    await expect.poll(() => nia.getByRole("heading", { level: 1 }).textContent()).toBe("Set your password");
    await nia.getByLabel("New password").fill("first-password-1");
    await nia.getByLabel("Type it again").fill("first-password-1");
    await nia.getByRole("button", { name: "Save password" }).click();
    await nia.waitForURL("**/login");
    await signIn(nia, email, "first-password-1");
    await nia.waitForURL((u) => u.pathname === "/");

    // Forgotten password: request, follow the e-mailed link, choose a new one.
    const anon = await browser.newPage();
    await anon.goto("/forgot-password");
    await expectAccessible(anon);
    await anon.getByLabel("E-mail").fill(email);
    await anon.getByRole("button", { name: "Send reset link" }).click();
    await expect.poll(() => anon.getByRole("status").first().textContent()).toContain("a reset link is on its way");
    await expect
      .poll(async () => (await mailTo(email)).some((m) => m.subject === "Reset your Dioptra password"))
      .toBe(true);
    await anon.goto("/dev/mailbox");
    await anon
      .getByRole("link", { name: /Reset your Dioptra password/ })
      .first()
      .click();
    await anon.getByRole("link", { name: /reset-password\?token=/ }).click();
    const resetUrl = anon.url();
    await anon.getByLabel("New password").fill("second-password-2");
    await anon.getByLabel("Type it again").fill("second-password-2");
    await anon.getByRole("button", { name: "Save password" }).click();
    await anon.waitForURL("**/login");
    await expect.poll(() => anon.getByTestId("toast").textContent()).toContain("Password saved");

    // The used link no longer works; the old password no longer signs in.
    await anon.goto(resetUrl);
    expect(await anon.getByRole("heading", { level: 1 }).textContent()).toBe("This link no longer works");
    await signIn(anon, email, "first-password-1");
    await expect.poll(() => anon.getByRole("alert").textContent()).toContain("do not match");
    await signIn(anon, email, "second-password-2");
    await anon.waitForURL((u) => u.pathname === "/");

    // Sign out from the user menu.
    await anon.getByText("Nia Farrow", { exact: true }).click();
    await anon.getByRole("button", { name: "Sign out" }).click();
    await anon.waitForURL("**/login");
    await anon.goto("/");
    await anon.waitForURL("**/login?redirectTo=%2F");
  });
});

describe("over plain HTTP", () => {
  async function login(email: string, password = "demo-password") {
    return fetch(`${baseUrl()}/login`, {
      method: "POST",
      body: new URLSearchParams({ email, password }),
      redirect: "manual",
    });
  }
  const cookieOf = (res: Response) => res.headers.get("set-cookie")!.split(";")[0]!;

  it.each([
    [DEMO.owner, "/", 200, 200],
    [DEMO.optometrist, "/", 200, 403],
    [DEMO.receptionist, "/", 200, 403],
    [DEMO.patient, "/portal", 403, 403],
  ])("POST /login as %s redirects to %s; settings answer %i/%i", async (email, home, _unused, settingsStatus) => {
    const res = await login(email);
    expect(res.status).toBe(302);
    expect(res.headers.get("location")).toBe(home);
    const cookie = cookieOf(res);
    const homeRes = await fetch(`${baseUrl()}${home}`, { headers: { cookie }, redirect: "manual" });
    expect(homeRes.status).toBe(200);
    const settings = await fetch(`${baseUrl()}/settings`, { headers: { cookie }, redirect: "manual" });
    expect(settings.status).toBe(settingsStatus);
  });

  it("keeps the patient out of staff pages", async () => {
    const cookie = cookieOf(await login(DEMO.patient));
    const res = await fetch(`${baseUrl()}/`, { headers: { cookie }, redirect: "manual" });
    expect(res.status).toBe(302);
    expect(res.headers.get("location")).toBe("/portal");
  });

  it("answers an empty sign-in with 400, a wrong one with 401", async () => {
    expect(
      (await fetch(`${baseUrl()}/login`, { method: "POST", body: new URLSearchParams({}), redirect: "manual" })).status,
    ).toBe(400);
    expect((await login(DEMO.owner, "nope-nope")).status).toBe(401);
  });

  it("refuses a cross-site POST whose Origin is another site", async () => {
    const res = await fetch(`${baseUrl()}/login`, {
      method: "POST",
      headers: { origin: "http://evil.example" },
      body: new URLSearchParams({ email: DEMO.owner, password: "demo-password" }),
      redirect: "manual",
    });
    expect(res.status).toBeGreaterThanOrEqual(400);
    expect(res.status).toBeLessThan(500);
    expect(res.headers.get("set-cookie")).toBeNull();
  });

  it("reports app and database health as JSON", async () => {
    const res = await fetch(`${baseUrl()}/healthz`);
    expect(res.status).toBe(200);
    expect(await res.json()).toMatchObject({ status: "ok", database: { status: "ok" } });
  });

  it("redirects a forged session cookie to sign-in", async () => {
    const res = await fetch(`${baseUrl()}/`, {
      headers: { cookie: "dioptra_session=eyJmb3JnZWQiOnRydWV9.bad" },
      redirect: "manual",
    });
    expect(res.status).toBe(302);
    expect(res.headers.get("location")).toMatch(/^\/login/);
  });
});
