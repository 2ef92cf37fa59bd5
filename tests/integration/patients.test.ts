import { and, eq, sql } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { loader as searchLoader } from "~/routes/api/patients";
import { action as chartAction, loader as chartLoader } from "~/routes/patients/chart";
import { action as editAction, loader as editLoader } from "~/routes/patients/edit";
import { loader as listLoader } from "~/routes/patients/index";
import { action as newAction } from "~/routes/patients/new";
import { auditLog, exams, patients } from "~/db/schema";
import { db } from "~/utils/db.server";
import { cookieFor, dataOf, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";

const uniq = () => Math.random().toString(36).slice(2, 8);

async function makePatient(over: Partial<typeof patients.$inferInsert> = {}) {
  const [p] = await db
    .insert(patients)
    .values({
      firstName: `Test${uniq()}`,
      lastName: `Quillfeather${uniq()}`,
      dateOfBirth: "1990-05-06",
      phone: "01632 960 777",
      email: `q-${uniq()}@example.test`,
      allergies: "Penicillin",
      medications: "None",
      ...over,
    })
    .returning();
  return p!;
}

const register = (cookie: string, form: Record<string, string>) =>
  run(newAction, makeRequest("/patients/new", { cookie, form }));

describe("patient search API", () => {
  it("finds a patient by any part of the name, by date of birth in two notations, by phone digits and by e-mail", async () => {
    const p = await makePatient({
      firstName: "Marisol",
      lastName: `Vantongeren${uniq()}`,
      dateOfBirth: "1984-11-23",
      phone: "07700 900 555",
      email: `marisol.${uniq()}@example.test`,
    });
    const cookie = await cookieFor("receptionist");
    const find = async (q: string) => {
      const res = (await run(
        searchLoader,
        makeRequest(`/api/patients?q=${encodeURIComponent(q)}`, { cookie }),
      )) as Response;
      expect(res.status).toBe(200);
      return ((await res.json()) as { results: { id: string }[] }).results.map((r) => r.id);
    };
    expect(await find(p.lastName.slice(3, 10))).toContain(p.id);
    expect(await find(`maris ${p.lastName.slice(0, 6)}`)).toContain(p.id);
    expect(await find("1984-11-23")).toContain(p.id);
    expect(await find("23/11/1984")).toContain(p.id);
    expect(await find("900555")).toContain(p.id);
    expect(await find(p.email!.slice(0, 12))).toContain(p.id);
    expect(await find("zzzz-no-such-patient")).toEqual([]);
  });

  it("counts a broad search five pages ahead of where the reader is, not every match", async () => {
    const surname = `Manycount${uniq()}`;
    await db
      .insert(patients)
      .values(
        Array.from({ length: 130 }, (_, i) => ({ firstName: `P${i}`, lastName: surname, dateOfBirth: "1980-01-01" })),
      );
    const cookie = await cookieFor("receptionist");
    const page = async (offset: number) =>
      (await (
        (await run(searchLoader, makeRequest(`/api/patients?q=${surname}&offset=${offset}`, { cookie }))) as Response
      ).json()) as { total: number; totalIsExact: boolean; results: unknown[] };
    // 20 a page: from the start it counts to 100 and says there are more.
    expect(await page(0)).toMatchObject({ total: 100, totalIsExact: false });
    // Asked for more, it counts further and reaches the exact number.
    expect(await page(20)).toMatchObject({ total: 120, totalIsExact: false });
    const later = await page(40);
    expect(later).toMatchObject({ total: 130, totalIsExact: true });
    expect(later.results).toHaveLength(20);
  });

  it("treats LIKE wildcards in the query as plain text", async () => {
    const cookie = await cookieFor("optometrist");
    const res = (await run(
      searchLoader,
      makeRequest(`/api/patients?q=${encodeURIComponent("%")}`, { cookie }),
    )) as Response;
    expect(((await res.json()) as { results: unknown[] }).results).toEqual([]);
  });

  it("answers 401 without a session and 403 to a patient", async () => {
    expect(statusOf(await run(searchLoader, makeRequest("/api/patients?q=ach")))).toBe(401);
    expect(
      statusOf(await run(searchLoader, makeRequest("/api/patients?q=ach", { cookie: await cookieFor("patient") }))),
    ).toBe(403);
  });
});

describe("patients table", () => {
  it("gives every sort's third page exactly the rows the same order reads in SQL", async () => {
    const cookie = await cookieFor("receptionist");
    // The reference orders, written out in SQL (nulls as each sort places them).
    const orders: Record<string, Record<"asc" | "desc", string>> = {
      name: {
        asc: "last_name asc, first_name asc, date_of_birth asc, id asc",
        desc: "last_name desc, first_name desc, date_of_birth desc, id desc",
      },
      dob: { asc: "date_of_birth asc, id asc", desc: "date_of_birth desc, id desc" },
      lastExam: { asc: "last_exam_at asc nulls first, id asc", desc: "last_exam_at desc nulls last, id desc" },
      created: { asc: "created_at asc, id asc", desc: "created_at desc, id desc" },
    };
    for (const [sort, dirs] of Object.entries(orders))
      for (const dir of ["asc", "desc"] as const) {
        const expected = (
          await db.execute<{ id: string }>(sql.raw(`select id from patients order by ${dirs[dir]} limit 10 offset 20`))
        ).rows.map((r) => r.id);
        const page = dataOf<{ rows: { id: string }[] }>(
          await run(listLoader, makeRequest(`/patients?sort=${sort}&dir=${dir}&size=10&page=3`, { cookie })),
        );
        expect(
          page.rows.map((r) => r.id),
          `${sort} ${dir}`,
        ).toEqual(expected);
      }
  });

  it("pages and sorts on the server from the URL", async () => {
    const cookie = await cookieFor("receptionist");
    const page1 = dataOf<{
      rows: { lastName: string; dateOfBirth: string }[];
      total: number;
      totalIsExact: boolean;
      query: { page: number };
    }>(await run(listLoader, makeRequest("/patients?sort=dob&dir=desc&size=10", { cookie })));
    expect(page1.rows.length).toBeLessThanOrEqual(10);
    const dobs = page1.rows.map((r) => r.dateOfBirth);
    expect([...dobs].sort().reverse()).toEqual(dobs);
    const page2 = dataOf<{ rows: { id: string }[] }>(
      await run(listLoader, makeRequest("/patients?sort=dob&dir=desc&size=10&page=2", { cookie })),
    );
    expect(page2.rows.length).toBeGreaterThan(0);
    // Counted up to ten pages ahead only: 415+ patients at 10 a page reads "more than 110" on page 1.
    expect(page1).toMatchObject({ total: 110, totalIsExact: false });
    const few = dataOf<{ total: number; totalIsExact: boolean }>(
      await run(listLoader, makeRequest("/patients?q=Strand-Achebe", { cookie })),
    );
    expect(few).toMatchObject({ total: 1, totalIsExact: true });
    const bogus = dataOf<{ query: { sort: string; page: number; size: number } }>(
      await run(listLoader, makeRequest("/patients?sort=drop&page=-4&size=7", { cookie })),
    );
    expect(bogus.query).toMatchObject({ sort: "name", page: 1, size: 25 });
  });

  it("refuses the patient role", async () => {
    expect(statusOf(await run(listLoader, makeRequest("/patients", { cookie: await cookieFor("patient") })))).toBe(403);
  });
});

describe("register and edit", () => {
  it("returns field errors for bad input and writes nothing", async () => {
    const cookie = await cookieFor("receptionist");
    const res = await register(cookie, {
      firstName: "",
      lastName: "X",
      dateOfBirth: "2999-01-01",
      email: "not-an-email",
      phone: "call me",
    });
    expect(statusOf(res)).toBe(400);
    const reply = dataOf<{ error: Record<string, string[]> }>(res);
    expect(Object.keys(reply.error).sort()).toEqual(["dateOfBirth", "email", "firstName", "phone"]);
    expect(reply.error.dateOfBirth![0]).toMatch(/future/);
  });

  it("requires a parent or guardian for a patient under 16, and saves them", async () => {
    const cookie = await cookieFor("receptionist");
    const last = `Pellingham${uniq()}`;
    // Twelve years old today; the rule's age is GUARDIAN_UNDER_AGE (common practice, see the schema).
    const dob = new Date(Date.now() - 12 * 365.25 * 864e5).toISOString().slice(0, 10);
    const res = await register(cookie, { firstName: "Wren", lastName: last, dateOfBirth: dob, guardianEmail: "nope" });
    expect(statusOf(res)).toBe(400);
    const reply = dataOf<{ error: Record<string, string[]> }>(res);
    expect(Object.keys(reply.error).sort()).toEqual(["guardianEmail", "guardianName", "guardianRelationship"]);
    expect(reply.error.guardianName![0]).toMatch(/Required for a patient under 16/);
    expect(reply.error.guardianEmail![0]).toMatch(/valid e-mail/);
    const none = await register(cookie, { firstName: "Wren", lastName: last, dateOfBirth: dob });
    expect(dataOf<{ error: Record<string, string[]> }>(none).error.guardianPhone![0]).toMatch(/phone or e-mail/);
    expect(await db.select().from(patients).where(eq(patients.lastName, last))).toHaveLength(0);

    const ok = (await register(cookie, {
      firstName: "Wren",
      lastName: last,
      dateOfBirth: dob,
      guardianName: "Isolde Pellingham",
      guardianRelationship: "Mother",
      guardianPhone: "07700 900 412",
    })) as Response;
    expect(ok.status).toBe(302);
    const [row] = await db.select().from(patients).where(eq(patients.lastName, last));
    expect(row).toMatchObject({ guardianName: "Isolde Pellingham", guardianRelationship: "Mother", guardianEmail: "" });

    // An adult needs none, but details without a name are refused.
    const adult = await register(cookie, {
      firstName: "Wren",
      lastName: `${last}x`,
      dateOfBirth: "1980-01-01",
      guardianPhone: "07700 900 413",
    });
    expect(statusOf(adult)).toBe(400);
    expect(Object.keys(dataOf<{ error: Record<string, string[]> }>(adult).error)).toEqual(["guardianName"]);
  });

  it("lets the front desk register demographics but not clinical fields, with an audit row", async () => {
    const cookie = await cookieFor("receptionist");
    const last = `Brightwater${uniq()}`;
    const res = (await register(cookie, {
      firstName: "Oona",
      lastName: last,
      dateOfBirth: "2001-02-03",
      allergies: "should be ignored",
      remindersByEmail: "on",
    })) as Response;
    expect(res.status).toBe(302);
    const [row] = await db.select().from(patients).where(eq(patients.lastName, last));
    expect(row).toMatchObject({ firstName: "Oona", allergies: "", remindersByEmail: true });
    const [a] = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "patient.created"), eq(auditLog.patientId, row!.id)));
    expect(a?.actorUserId).toBe((await userByEmail("reception@dioptra-demo.test")).id);
  });

  it("warns about a duplicate name and date of birth, and registers only when confirmed", async () => {
    const existing = await makePatient({
      firstName: "Gwendolyn",
      lastName: `Ashgrove${uniq()}`,
      dateOfBirth: "1975-07-08",
    });
    const cookie = await cookieFor("optometrist");
    const form = { firstName: "gwendolyn", lastName: existing.lastName.toUpperCase(), dateOfBirth: "1975-07-08" };
    const res = await register(cookie, form);
    expect(statusOf(res)).toBe(409);
    const reply = dataOf<{ duplicates: { id: string }[]; error: Record<string, string[]> }>(res);
    expect(reply.duplicates.map((d) => d.id)).toEqual([existing.id]);
    expect(JSON.stringify(reply.error)).toMatch(/already registered/);
    expect(
      (await db.select().from(patients).where(eq(patients.dateOfBirth, "1975-07-08"))).filter(
        (p) => p.lastName.toLowerCase() === existing.lastName.toLowerCase(),
      ),
    ).toHaveLength(1);
    const ok = (await register(cookie, { ...form, confirmDuplicate: "yes" })) as Response;
    expect(ok.status).toBe(302);
  });

  it("keeps clinical fields from the front desk on edit, and 404s an unknown id", async () => {
    const p = await makePatient();
    const cookie = await cookieFor("receptionist");
    const view = dataOf<{ patient: Record<string, unknown>; clinical: boolean }>(
      await run(editLoader, makeRequest(`/patients/${p.id}/edit`, { cookie }), { patientId: p.id }),
    );
    expect(view.clinical).toBe(false);
    expect(view.patient).not.toHaveProperty("allergies");
    const res = (await run(
      editAction,
      makeRequest(`/patients/${p.id}/edit`, {
        cookie,
        form: {
          firstName: p.firstName,
          lastName: p.lastName,
          dateOfBirth: p.dateOfBirth,
          phone: "07700 900 111",
          allergies: "",
        },
      }),
      { patientId: p.id },
    )) as Response;
    expect(res.status).toBe(302);
    const [after] = await db.select().from(patients).where(eq(patients.id, p.id));
    expect(after).toMatchObject({ phone: "07700 900 111", allergies: "Penicillin" });
    const bad = await run(
      editAction,
      makeRequest(`/patients/${p.id}/edit`, {
        cookie,
        form: { firstName: "", lastName: p.lastName, dateOfBirth: "1990-02-30" },
      }),
      { patientId: p.id },
    );
    expect(statusOf(bad)).toBe(400);
    expect(Object.keys(dataOf<{ error: Record<string, string[]> }>(bad).error).sort()).toEqual([
      "dateOfBirth",
      "firstName",
    ]);
    expect(
      statusOf(
        await run(
          editAction,
          makeRequest(`/patients/${p.id}/edit`, {
            cookie: await cookieFor("patient"),
            form: { firstName: "X", lastName: "Y", dateOfBirth: "1990-01-01" },
          }),
          { patientId: p.id },
        ),
      ),
    ).toBe(403);
    const [unchanged] = await db.select().from(patients).where(eq(patients.id, p.id));
    expect(unchanged!.firstName).toBe(p.firstName);
    expect(
      statusOf(await run(editLoader, makeRequest(`/patients/x/edit`, { cookie }), { patientId: "not-a-uuid" })),
    ).toBe(404);
    expect(
      statusOf(
        await run(editLoader, makeRequest(`/patients/x/edit`, { cookie }), {
          patientId: "00000000-0000-4000-8000-000000000000",
        }),
      ),
    ).toBe(404);
  });
});

describe("chart", () => {
  it("shows the front desk demographics, appointments, invoices and prescriptions only, and audits the read", async () => {
    const p = await makePatient();
    const cookie = await cookieFor("receptionist");
    const d = dataOf<Record<string, unknown>>(
      await run(chartLoader, makeRequest(`/patients/${p.id}`, { cookie }), { patientId: p.id }),
    );
    expect(d.clinical).toBe(false);
    expect(Object.keys(d).sort()).toEqual([
      "appointments",
      "balance",
      "canBill",
      "canOrder",
      "clinical",
      "invoices",
      "patient",
      "prescriptions",
    ]);
    expect(d.patient).not.toHaveProperty("allergies");
    const rows = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "chart.read"), eq(auditLog.patientId, p.id)));
    expect(rows).toHaveLength(1);
  });

  it("shows a clinician the summary with allergies, exams and alerts", async () => {
    const p = await makePatient();
    const d = dataOf<{ clinical: boolean; patient: { allergies: string }; exams: unknown[]; recall: { due: boolean } }>(
      await run(chartLoader, makeRequest(`/patients/${p.id}`, { cookie: await cookieFor("optometrist") }), {
        patientId: p.id,
      }),
    );
    expect(d.clinical).toBe(true);
    expect(d.patient.allergies).toBe("Penicillin");
    expect(d.recall.due).toBe(true);
  });

  it("refuses a patient (even their own id goes through the portal) and 404s unknown ids", async () => {
    const me = await userByEmail("patient@dioptra-demo.test");
    const other = await makePatient();
    const cookie = await cookieFor("patient");
    expect(
      statusOf(await run(chartLoader, makeRequest(`/patients/${other.id}`, { cookie }), { patientId: other.id })),
    ).toBe(403);
    expect(
      statusOf(
        await run(chartLoader, makeRequest(`/patients/${me.patientId}`, { cookie }), { patientId: me.patientId! }),
      ),
    ).toBe(403);
    expect(
      statusOf(
        await run(chartLoader, makeRequest(`/patients/1`, { cookie: await cookieFor("owner") }), {
          patientId: "00000000-0000-4000-8000-000000000000",
        }),
      ),
    ).toBe(404);
  });

  it("answers an unknown chart action with 400", async () => {
    const p = await makePatient();
    expect(
      statusOf(
        await run(
          chartAction,
          makeRequest(`/patients/${p.id}`, { cookie: await cookieFor("owner"), form: { intent: "delete-everything" } }),
          { patientId: p.id },
        ),
      ),
    ).toBe(400);
  });

  it("lets only clinical roles start an exam", async () => {
    const p = await makePatient();
    const denied = await run(
      chartAction,
      makeRequest(`/patients/${p.id}`, { cookie: await cookieFor("receptionist"), form: { intent: "start-exam" } }),
      { patientId: p.id },
    );
    expect(statusOf(denied)).toBe(403);
    expect(await db.select().from(exams).where(eq(exams.patientId, p.id))).toHaveLength(0);
    const ok = (await run(
      chartAction,
      makeRequest(`/patients/${p.id}`, { cookie: await cookieFor("optometrist"), form: { intent: "start-exam" } }),
      { patientId: p.id },
    )) as Response;
    expect(ok.status).toBe(302);
    const [exam] = await db.select().from(exams).where(eq(exams.patientId, p.id));
    expect(ok.headers.get("location")).toBe(`/patients/${p.id}/exams/${exam!.id}`);
    const [after] = await db.select().from(patients).where(eq(patients.id, p.id));
    expect(after!.lastExamAt?.toISOString()).toBe(exam!.examinedAt.toISOString());
  });

  it("raises the engine's referral prompts and a child's myopia progression from the demo caseload", async () => {
    const cookie = await cookieFor("optometrist");
    const chartOf = async (lastName: string) => {
      const [p] = await db.select().from(patients).where(eq(patients.lastName, lastName));
      return dataOf<{
        prompts: { code: string; eye: string }[];
        progression: Record<
          string,
          {
            recent: { ratePerYear: number; atOrBeyondThreshold: boolean; label: string };
            overall: { ratePerYear: number } | null;
          }
        > | null;
        history: { M: number; kind: string }[];
      }>(await run(chartLoader, makeRequest(`/patients/${p!.id}`, { cookie }), { patientId: p!.id }));
    };
    const referral = await chartOf("Strand-Achebe");
    expect(referral.prompts.map((p) => `${p.code}:${p.eye}`).sort()).toEqual([
      "BLIND_SPOT_ENLARGED:right",
      "FIELD_DEFECT:right",
      "IOP_REPEAT:both",
      "IOP_REPEAT:right",
    ]);
    const child = await chartOf("Okafor-Lindqvist");
    // Seeded at -0.75 D a year: spherical equivalent of -0.75 -0.25 x 180 falls by 0.75 D per yearly exam.
    expect(child.progression!.right!.recent.ratePerYear).toBeCloseTo(-0.75, 1);
    expect(child.progression!.right!.overall!.ratePerYear).toBeCloseTo(-0.75, 1);
    expect(child.progression!.right!.recent.atOrBeyondThreshold).toBe(true);
    expect(child.progression!.right!.recent.label).toMatch(/^Most recent interval/);
    expect(child.history.filter((h) => h.kind === "final")).toHaveLength(10);
    const adult = await chartOf("Sorrell-Amadi");
    expect(adult.progression).toBeNull();
  });
});
