import { eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { action as inviteAction } from "~/routes/api/portal-invite";
import { action as resetAction, loader as resetLoader } from "~/routes/auth/reset-password";
import { action as linkAction } from "~/routes/auth/sign-in-link";
import { deliverAccountMail } from "~/models/users/account-mail.server";
import { action as verifyAction, loader as verifyLoader } from "~/routes/auth/sign-in-link-verify";
import { action as remindersAction, loader as remindersLoader } from "~/routes/portal/reminders";
import { auditLog, patients, users } from "~/db/schema";
import { db } from "~/utils/db.server";
import { getSessionUser } from "~/utils/session.server";
import { newPatient as makePatient } from "#tests/support/factories";
import { cookieFor, linkIn, mailTo, makeRequest, run, statusOf, uniqueEmail } from "#tests/support/helpers";

const newPatient = (email: string | null = uniqueEmail("pt")) =>
  makePatient({ firstName: "Oona", dateOfBirth: "1988-02-03", email });

async function jsonOf(res: unknown) {
  return (await (res as Response).json()) as Record<string, unknown>;
}

describe("portal invitation", () => {
  it("creates a patient account linked to the record and e-mails a set-password link", async () => {
    const patient = await newPatient();
    const res = await run(
      inviteAction,
      makeRequest("/api/portal-invite", { cookie: await cookieFor("receptionist"), json: { patientId: patient.id } }),
    );
    expect(statusOf(res)).toBe(200);
    const [account] = await db.select().from(users).where(eq(users.patientId, patient.id));
    expect(account).toMatchObject({ role: "patient", email: patient.email, passwordHash: null });
    const [mail] = await mailTo(patient.email!);
    const token = linkIn(mail!.text, "/reset-password?token=").searchParams.get("token")!;
    expect(await run(resetLoader, makeRequest(`/reset-password?token=${token}`))).toMatchObject({
      valid: true,
      purpose: "invite",
    });
    expect(
      statusOf(
        await run(
          resetAction,
          makeRequest("/reset-password", { form: { token, password: "patient-pass-1", confirm: "patient-pass-1" } }),
        ),
      ),
    ).toBe(302);
    // A second invitation is refused: the account is active now.
    const again = await run(
      inviteAction,
      makeRequest("/api/portal-invite", { cookie: await cookieFor("receptionist"), json: { patientId: patient.id } }),
    );
    expect(statusOf(again)).toBe(409);
    expect((await jsonOf(again)).error).toMatch(/already has an active online account/);
  });

  it("asks for an e-mail address first, and refuses bad ids and patients", async () => {
    const noEmail = await newPatient(null);
    const res = await run(
      inviteAction,
      makeRequest("/api/portal-invite", { cookie: await cookieFor("owner"), json: { patientId: noEmail.id } }),
    );
    expect(statusOf(res)).toBe(409);
    expect((await jsonOf(res)).error).toMatch(/e-mail address first/);
    expect(
      statusOf(
        await run(
          inviteAction,
          makeRequest("/api/portal-invite", { cookie: await cookieFor("owner"), json: { patientId: "nope" } }),
        ),
      ),
    ).toBe(400);
    expect(
      statusOf(
        await run(
          inviteAction,
          makeRequest("/api/portal-invite", { cookie: await cookieFor("patient"), json: { patientId: noEmail.id } }),
        ),
      ),
    ).toBe(403);
    expect(await db.select().from(users).where(eq(users.patientId, noEmail.id))).toHaveLength(0);
  });
});

describe("e-mailed sign-in link", () => {
  async function requestLink(email: string) {
    await run(linkAction, makeRequest("/sign-in-link", { form: { email } }));
    // The page queues the e-mail; the worker sends it.
    await deliverAccountMail({ kind: "sign_in", email, ip: null });
    const mails = (await mailTo(email)).filter((m) => m.subject === "Your sign-in link");
    return mails[0] ? linkIn(mails[0].text, "/sign-in-link/verify?token=").searchParams.get("token")! : null;
  }

  it("signs a patient in once; the link cannot be reused or used to set a password", async () => {
    const token = await requestLink("patient@dioptra-demo.test");
    expect(token).toBeTruthy();
    // Opening the link does not use it up (mail scanners fetch links).
    expect(await run(verifyLoader, makeRequest(`/sign-in-link/verify?token=${token}`))).toMatchObject({ valid: true });
    expect(await run(resetLoader, makeRequest(`/reset-password?token=${token}`))).toMatchObject({ valid: false });
    const res = (await run(verifyAction, makeRequest("/sign-in-link/verify", { form: { token: token! } }))) as Response;
    expect(res.status).toBe(302);
    expect(res.headers.get("location")).toBe("/portal");
    const user = await getSessionUser(makeRequest("/", { cookie: res.headers.get("set-cookie")!.split(";")[0] }));
    expect(user?.role).toBe("patient");
    expect(statusOf(await run(verifyAction, makeRequest("/sign-in-link/verify", { form: { token: token! } })))).toBe(
      400,
    );
  });

  it("sends nothing to staff accounts or unknown addresses", async () => {
    expect(await requestLink("reception@dioptra-demo.test")).toBeNull();
    expect(await requestLink(uniqueEmail("ghost"))).toBeNull();
  });
});

describe("reminder choices", () => {
  it("lets the patient switch e-mails off, records it, and is the patient's own only", async () => {
    const cookie = await cookieFor("patient");
    const me = await getSessionUser(makeRequest("/", { cookie }));
    const res = await run(
      remindersAction,
      makeRequest("/portal/reminders", { cookie, form: { recallsByEmail: "on" } }),
    );
    expect(statusOf(res)).toBe(302);
    const [row] = await db
      .select({ r: patients.remindersByEmail, c: patients.recallsByEmail })
      .from(patients)
      .where(eq(patients.id, me!.patientId!));
    expect(row).toEqual({ r: false, c: true });
    const [logged] = await db.select().from(auditLog).where(eq(auditLog.action, "portal.reminder_choice"));
    expect(logged?.patientId).toBe(me!.patientId);
    expect(await run(remindersLoader, makeRequest("/portal/reminders", { cookie }))).toMatchObject({
      remindersByEmail: false,
      recallsByEmail: true,
    });
    await run(
      remindersAction,
      makeRequest("/portal/reminders", { cookie, form: { remindersByEmail: "on", recallsByEmail: "on" } }),
    );
  });

  it("is closed to staff", async () => {
    expect(
      statusOf(
        await run(remindersLoader, makeRequest("/portal/reminders", { cookie: await cookieFor("receptionist") })),
      ),
    ).toBe(403);
    expect(
      statusOf(
        await run(remindersAction, makeRequest("/portal/reminders", { cookie: await cookieFor("owner"), form: {} })),
      ),
    ).toBe(403);
  });
});
