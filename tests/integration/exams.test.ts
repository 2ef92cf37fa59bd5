import { and, eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { action as examAction, loader as examLoader } from "~/routes/exams/exam";
import {
  appointments,
  appointmentStatusChanges,
  appointmentTypes,
  auditLog,
  examAcuity,
  examAddenda,
  examCountersignatures,
  examDiagnoses,
  examIop,
  examRefractions,
  exams,
  examSectionStates,
  prescriptions,
} from "~/db/schema";
import { db } from "~/utils/db.server";
import { newExam, newPatient } from "#tests/support/factories";
import { cookieFor, dataOf, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";

const uniq = () => Math.random().toString(36).slice(2, 8);

async function setup(opts: { previousFinal?: boolean } = {}) {
  const p = await newPatient({ firstName: "Exam", lastName: `Case${uniq()}`, dateOfBirth: "1988-03-04", email: null });
  if (opts.previousFinal) {
    await newExam({
      patientId: p.id,
      signed: true,
      examinedAt: new Date(Date.now() - 365 * 864e5),
      refractions: [
        { kind: "final", eye: "right", rawText: "-2.00 -0.50 x 180", sphere: -2, cylinder: -0.5, axis: 180 },
        { kind: "final", eye: "left", rawText: "-1.75 DS", sphere: -1.75, cylinder: 0, axis: 180 },
      ],
    });
  }
  const { exam, params } = await newExam({ patientId: p.id });
  return { patient: p, exam, params };
}

const post = async (role: string, params: { patientId: string; examId: string }, form: Record<string, string>) =>
  run(
    examAction,
    makeRequest(`/patients/${params.patientId}/exams/${params.examId}`, { cookie: await cookieFor(role), form }),
    params,
  );

describe("exam access", () => {
  it("gives the front desk 403 on read and on every write, and writes nothing", async () => {
    const { params, exam } = await setup();
    expect(
      statusOf(await run(examLoader, makeRequest("/x", { cookie: await cookieFor("receptionist") }), params)),
    ).toBe(403);
    for (const form of <Record<string, string>[]>[
      { intent: "save", section: "refraction:final", right_rx: "-1.00 DS" },
      { intent: "save", section: "iop", right_mmHg: "30", right_method: "goldmann", right_time: "10:00" },
      { intent: "sign" },
    ]) {
      expect(statusOf(await post("receptionist", params, form))).toBe(403);
    }
    expect(await db.select().from(examRefractions).where(eq(examRefractions.examId, exam.id))).toHaveLength(0);
    expect(await db.select().from(examIop).where(eq(examIop.examId, exam.id))).toHaveLength(0);
    const [after] = await db.select().from(exams).where(eq(exams.id, exam.id));
    expect(after!.status).toBe("in_progress");
  });

  it("gives a patient 403 and answers 404 for an exam under another patient's id or a guessed id", async () => {
    const a = await setup();
    const b = await setup();
    expect(statusOf(await run(examLoader, makeRequest("/x", { cookie: await cookieFor("patient") }), a.params))).toBe(
      403,
    );
    const owner = await cookieFor("owner");
    expect(
      statusOf(
        await run(examLoader, makeRequest("/x", { cookie: owner }), { patientId: b.patient.id, examId: a.exam.id }),
      ),
    ).toBe(404);
    expect(
      statusOf(
        await run(examLoader, makeRequest("/x", { cookie: owner }), {
          patientId: a.patient.id,
          examId: "00000000-0000-4000-8000-000000000000",
        }),
      ),
    ).toBe(404);
    expect(
      statusOf(
        await run(
          examAction,
          makeRequest("/x", { cookie: owner, form: { intent: "save", section: "history", reason: "x" } }),
          { patientId: b.patient.id, examId: a.exam.id },
        ),
      ),
    ).toBe(404);
  });
});

describe("saving sections", () => {
  it("parses a refraction with the engine, keeps the typed text, and audits the write", async () => {
    const { params, exam } = await setup();
    const res = await post("optometrist", params, {
      intent: "save",
      section: "refraction:subjective",
      right_rx: "-2.25 -0.75 x 175",
      right_add: "1.50",
      right_va: "6/6",
      left_rx: "pl",
      left_prism: "1",
      left_base: "in",
      left_vertex: "12",
    });
    expect(statusOf(res)).toBe(200);
    const rows = await db.select().from(examRefractions).where(eq(examRefractions.examId, exam.id));
    const right = rows.find((r) => r.eye === "right")!;
    const left = rows.find((r) => r.eye === "left")!;
    expect(right).toMatchObject({
      rawText: "-2.25 -0.75 x 175",
      sphere: -2.25,
      cylinder: -0.75,
      axis: 175,
      addPower: 1.5,
      vaNotation: "6/6",
      vaLogMar: 0,
    });
    expect(left).toMatchObject({ sphere: 0, cylinder: 0, axis: 180, prismDioptres: 1, prismBase: "in", vertexMm: 12 });
    const audits = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "exam.section_saved"), eq(auditLog.entityId, exam.id)));
    expect(audits[0]?.detail).toEqual({ section: "refraction:subjective" });
  });

  it("refuses an invalid field with 400 naming the field, and keeps what was saved before", async () => {
    const { params, exam } = await setup();
    await post("optometrist", params, { intent: "save", section: "refraction:final", right_rx: "-1.00 DS" });
    const res = await post("optometrist", params, {
      intent: "save",
      section: "refraction:final",
      right_rx: "-1.25 -0.50 x 195",
      left_rx: "-1.00",
      left_va: "6/banana",
    });
    expect(statusOf(res)).toBe(400);
    const reply = dataOf<{ ok: boolean; errors: Record<string, string[]> }>(res);
    expect(reply.ok).toBe(false);
    expect(Object.keys(reply.errors).sort()).toEqual(["left_va", "right_rx"]);
    expect(reply.errors.right_rx![0]).toMatch(/^Right final/);
    expect(reply.errors.right_rx![0]).toMatch(/195/);
    const rows = await db.select().from(examRefractions).where(eq(examRefractions.examId, exam.id));
    expect(rows.map((r) => [r.eye, r.sphere])).toEqual([["right", -1]]);
  });

  it("validates acuity, IOP, colour vision and blind spot, and rejects unknown sections", async () => {
    const { params, exam } = await setup();
    expect(
      statusOf(
        await post("optometrist", params, {
          intent: "save",
          section: "acuity",
          va_right_distance_unaided: "20/40-2",
          va_left_near_best: "N-what",
        }),
      ),
    ).toBe(400);
    expect(await db.select().from(examAcuity).where(eq(examAcuity.examId, exam.id))).toHaveLength(0);
    expect(
      statusOf(
        await post("optometrist", params, {
          intent: "save",
          section: "acuity",
          va_right_distance_unaided: "20/40-2",
          va_both_distance_best: "6/5",
        }),
      ),
    ).toBe(200);
    const va = await db.select().from(examAcuity).where(eq(examAcuity.examId, exam.id));
    // 20/40 is logMAR 0.301, two letters missed add 0.02 each (Bailey & Lovie 1976 letter scoring); kept to 0.01.
    expect(va.find((r) => r.eye === "right")!.logMar).toBeCloseTo(0.34, 2);
    const iop = dataOf<{ errors: Record<string, string[]> }>(
      await post("optometrist", params, { intent: "save", section: "iop", right_mmHg: "19" }),
    );
    // The method is still needed; a missing time of day is the time of the save.
    expect(Object.keys(iop.errors).sort()).toEqual(["right_method"]);
    const cv = dataOf<{ errors: Record<string, string[]> }>(
      await post("optometrist", params, {
        intent: "save",
        section: "colour",
        right_test: "plates_38",
        right_result: "normal",
        right_correct: "16",
        right_shown: "15",
      }),
    );
    expect(cv.errors.right_correct![0]).toMatch(/cannot exceed/);
    const vf = dataOf<{ errors: Record<string, string[]> }>(
      await post("optometrist", params, {
        intent: "save",
        section: "fields",
        right_fmethod: "automated",
        right_bsX: "15",
      }),
    );
    expect(Object.keys(vf.errors).sort()).toEqual(["right_bsH", "right_bsW", "right_bsY"]);
    expect(statusOf(await post("optometrist", params, { intent: "save", section: "drop table" }))).toBe(400);
  });

  it("shows last visit's final refraction and the engine's referral prompts beside the findings", async () => {
    const { params } = await setup({ previousFinal: true });
    await post("optometrist", params, {
      intent: "save",
      section: "iop",
      right_mmHg: "27",
      right_method: "goldmann",
      right_time: "09:40",
      left_mmHg: "18",
      left_method: "goldmann",
      left_time: "09:41",
    });
    await post("optometrist", params, {
      intent: "save",
      section: "fields",
      right_fmethod: "automated",
      right_bsX: "15",
      right_bsY: "-1.5",
      right_bsW: "10",
      right_bsH: "12",
    });
    const d = dataOf<{
      previous: { rows: Record<string, { sphere: number }> };
      prompts: { code: string; eye: string; rule: string; source: string }[];
    }>(await run(examLoader, makeRequest("/x", { cookie: await cookieFor("optometrist") }), params));
    expect(d.previous.rows.right!.sphere).toBe(-2);
    const codes = d.prompts.map((p) => `${p.code}:${p.eye}`).sort();
    expect(codes).toEqual(["BLIND_SPOT_ENLARGED:right", "IOP_ABOVE_NORMAL:right", "IOP_ASYMMETRY:both"]);
    expect(d.prompts.every((p) => p.rule && p.source)).toBe(true);
  });
});

describe("signing and addenda", () => {
  it("locks a signed exam, takes addenda with author and time, and audits each step", async () => {
    const { params, exam } = await setup();
    expect(
      statusOf(await post("optometrist", params, { intent: "addendum", section: "Final", body: "Too early" })),
    ).toBe(409);
    const signed = (await post("optometrist", params, { intent: "sign", confirmed: "yes" })) as Response;
    expect(signed.status).toBe(302);
    const [row] = await db.select().from(exams).where(eq(exams.id, exam.id));
    const optom = await userByEmail("optometrist@dioptra-demo.test");
    expect(row).toMatchObject({ status: "signed", signedById: optom.id });
    expect(statusOf(await post("optometrist", params, { intent: "sign" }))).toBe(409);
    const late = await post("owner", params, { intent: "save", section: "history", reason: "changed after signing" });
    expect(statusOf(late)).toBe(409);
    expect(statusOf(await post("owner", params, { intent: "addendum", section: "", body: "" }))).toBe(400);
    expect(
      statusOf(
        await post("owner", params, {
          intent: "addendum",
          section: "Case history",
          body: "Patient also reports glare at night.",
        }),
      ),
    ).toBe(302);
    const owner = await userByEmail("owner@dioptra-demo.test");
    const [ad] = await db.select().from(examAddenda).where(eq(examAddenda.examId, exam.id));
    expect(ad).toMatchObject({ authorId: owner.id, section: "Case history" });
    expect(ad!.createdAt).toBeInstanceOf(Date);
    const actions = (await db.select().from(auditLog).where(eq(auditLog.entityId, exam.id))).map((a) => a.action);
    expect(actions).toContain("exam.signed");
  });

  it("lets exactly one of two simultaneous signatures win", async () => {
    const { params, exam } = await setup();
    const results = await Promise.all([
      post("optometrist", params, { intent: "sign", confirmed: "yes" }),
      post("optometrist", params, { intent: "sign", confirmed: "yes" }),
    ]);
    expect(results.map(statusOf).sort()).toEqual([302, 409]);
    expect(
      await db
        .select()
        .from(auditLog)
        .where(and(eq(auditLog.action, "exam.signed"), eq(auditLog.entityId, exam.id))),
    ).toHaveLength(1);
  });

  it("audits every exam read", async () => {
    const { params, exam } = await setup();
    await run(examLoader, makeRequest("/x", { cookie: await cookieFor("owner") }), params);
    expect(
      await db
        .select()
        .from(auditLog)
        .where(and(eq(auditLog.action, "exam.read"), eq(auditLog.entityId, exam.id))),
    ).toHaveLength(1);
  });
});

describe("clinical findings and triage", () => {
  it("feeds triage the plotted blind spot and a reported headache: soon without headache, same day with it", async () => {
    // College of Optometrists GPP C205: papilloedema is an emergency; NHS BNSSG Remedy "Papilloedema": with headache
    // (symptoms of raised intracranial pressure) the patient needs emergency assessment; NHS Scotland Eyecare Guidelines 11.6:
    // semi-urgent without such symptoms. An enlarged blind spot is the field sign of disc swelling (common practice).
    const { params, exam } = await setup();
    const ok = async (form: Record<string, string>) =>
      expect(statusOf(await post("optometrist", params, { intent: "save", ...form }))).toBe(200);
    await ok({
      section: "fields",
      right_fmethod: "automated",
      right_bsX: "15",
      right_bsY: "-1.5",
      right_bsW: "10",
      right_bsH: "12",
    });
    let [row] = await db.select().from(exams).where(eq(exams.id, exam.id));
    expect(row!.triage).toMatchObject({
      urgency: "soon",
      reasons: [{ eye: "R", rule: "Enlarged blind spot without headache: examine the optic discs for swelling" }],
    });
    await ok({ section: "redflags", rf_headache: "on", rf_notes: "Headaches on waking for three weeks" });
    [row] = await db.select().from(exams).where(eq(exams.id, exam.id));
    expect(row!.triage).toMatchObject({
      urgency: "same_day",
      reasons: [
        {
          urgency: "same_day",
          eye: "R",
          rule: "Enlarged blind spot with headache: possible papilloedema (raised intracranial pressure)",
        },
      ],
    });
    const d = dataOf<{ values: Record<string, string> }>(
      await run(examLoader, makeRequest("/x", { cookie: await cookieFor("optometrist") }), params),
    );
    expect(d.values.rf_headache).toBe("on");
  });

  it("saves red flags, pupils, anterior chamber, disc, fundus and dilation, and keeps triage's proposal with the exam on every save", async () => {
    const { params, exam } = await setup();
    const ok = async (form: Record<string, string>) =>
      expect(statusOf(await post("optometrist", params, { intent: "save", ...form }))).toBe(200);
    await ok({ section: "redflags", rf_flashes: "left", rf_newFloaters: "left", rf_notes: "since yesterday evening" });
    let [row] = await db.select().from(exams).where(eq(exams.id, exam.id));
    // Flashes with new floaters: urgent per the College's guidance (engine's rule; see app/lib/referrals).
    expect(row!.triage?.urgency).toBeTruthy();
    const before = row!.triage!.urgency;
    await ok({ section: "fundus", left_fu_retinalBreak: "on", left_fu_vitreousPigment: "on" });
    [row] = await db.select().from(exams).where(eq(exams.id, exam.id));
    // A retinal break with symptoms is an emergency (College of Optometrists, urgency of referrals): same day.
    expect(row!.triage).toMatchObject({ urgency: "same_day" });
    expect(row!.triage!.reasons.some((r) => r.eye === "L" && r.urgency === "same_day")).toBe(true);
    expect(["urgent", "soon", "same_day"]).toContain(before);
    await ok({ section: "pupils", right_pup_equal: "on", left_pup_equal: "on" });
    await ok({ section: "ac", right_ac_vh: "3", right_ac_cells: "none", left_ac_vh: "3", left_ac_cells: "none" });
    await ok({
      section: "disc",
      right_disc_cd: "0.35",
      right_disc_margins: "distinct",
      left_disc_cd: "0.4",
      left_disc_margins: "distinct",
    });
    const local = new Date(Date.now() - 10 * 60e3)
      .toLocaleString("sv-SE", { timeZone: "Europe/London" })
      .slice(0, 16)
      .replace(" ", "T");
    await ok({ section: "dilation", dil1_drug: "tropicamide", dil1_strength: "1", dil1_eye: "both", dil1_at: local });
    const d = dataOf<{ values: Record<string, string>; triage: { urgency: string } }>(
      await run(examLoader, makeRequest("/x", { cookie: await cookieFor("optometrist") }), params),
    );
    expect(d.values).toMatchObject({
      rf_flashes: "left",
      left_fu_retinalBreak: "on",
      right_disc_cd: "0.35",
      right_ac_vh: "3",
      dil1_drug: "tropicamide",
      dil1_at: local,
    });
    expect(d.triage.urgency).toBe("same_day");

    // An exam saved before triage was kept with it is triaged on reading, from the sections the
    // page has read: the same proposal as the one kept on saving.
    const [kept] = await db.select({ triage: exams.triage }).from(exams).where(eq(exams.id, exam.id));
    await db.update(exams).set({ triage: null }).where(eq(exams.id, exam.id));
    const read = dataOf<{ triage: unknown }>(
      await run(examLoader, makeRequest("/x", { cookie: await cookieFor("optometrist") }), params),
    );
    expect(read.triage).toEqual(kept!.triage);
    expect(read.triage).toMatchObject({ urgency: "same_day" });
  });

  it("refuses impossible values field by field and leaves the section as it was", async () => {
    const { params, exam } = await setup();
    await post("optometrist", params, {
      intent: "save",
      section: "iop",
      right_mmHg: "18",
      right_method: "goldmann",
      right_time: "09:00",
    });
    const bad = dataOf<{ errors: Record<string, string[]> }>(
      await post("optometrist", params, {
        intent: "save",
        section: "iop",
        right_mmHg: "0",
        right_method: "goldmann",
        right_time: "09:00",
        left_mmHg: "90",
        left_method: "goldmann",
        left_time: "09:00",
        right_mmHg_2: "0x10",
        left_mmHg_2: "1e1",
      }),
    );
    expect(Object.keys(bad.errors).sort()).toEqual(["left_mmHg", "left_mmHg_2", "right_mmHg", "right_mmHg_2"]);
    expect(bad.errors.left_mmHg![0]).toMatch(/90 is outside 1 to 80/);
    expect(bad.errors.right_mmHg_2![0]).toMatch(/not a number/);
    expect((await db.select().from(examIop).where(eq(examIop.examId, exam.id))).map((r) => r.mmHg)).toEqual([18]);
    const cd = dataOf<{ errors: Record<string, string[]> }>(
      await post("optometrist", params, { intent: "save", section: "disc", right_disc_cd: "1.4", left_disc_cd: "0.3" }),
    );
    expect(Object.keys(cd.errors)).toEqual(["right_disc_cd"]);
    const va = dataOf<{ errors: Record<string, string[]> }>(
      await post("optometrist", params, {
        intent: "save",
        section: "acuity",
        va_notation: "logmar",
        va_right_distance_best: "3.5",
        va_left_distance_best: "0.1",
      }),
    );
    expect(Object.keys(va.errors)).toEqual(["va_right_distance_best"]);
    const rx = dataOf<{ errors: Record<string, string[]> }>(
      await post("optometrist", params, {
        intent: "save",
        section: "refraction:final",
        right_rx: "-1.00 -0.50 x 0",
        left_rx: "-1.00 -0.50 x 181",
      }),
    );
    expect(Object.keys(rx.errors).sort()).toEqual(["left_rx", "right_rx"]);
    const future = dataOf<{ errors: Record<string, string[]> }>(
      await post("optometrist", params, {
        intent: "save",
        section: "dilation",
        dil1_drug: "tropicamide",
        dil1_strength: "1",
        dil1_eye: "both",
        dil1_at: "2099-01-01T10:00",
      }),
    );
    expect(future.errors.dil1_at![0]).toMatch(/future/);
    const [row] = await db.select().from(exams).where(eq(exams.id, exam.id));
    expect(row!.triage).toMatchObject({ urgency: null });
  });

  it("reads a bare acuity in the notation the entry states, and refuses it when the notation is Snellen", async () => {
    const { params, exam } = await setup();
    const refused = dataOf<{ errors: Record<string, string[]> }>(
      await post("optometrist", params, { intent: "save", section: "acuity", va_right_distance_best: "1.0" }),
    );
    expect(refused.errors.va_right_distance_best![0]).toMatch(/unambiguously/);
    expect(
      statusOf(
        await post("optometrist", params, {
          intent: "save",
          section: "acuity",
          va_notation: "logmar",
          va_right_distance_best: "1.0",
          va_left_distance_pinhole: "PH 6/9",
          va_left_near_best: "N8",
        }),
      ),
    ).toBe(200);
    const rows = await db.select().from(examAcuity).where(eq(examAcuity.examId, exam.id));
    // logMAR 1.0 is 6/60 (definition of the logMAR scale)
    expect(rows.find((r) => r.eye === "right")).toMatchObject({ notation: "logMAR 1.00", logMar: 1, scale: "logmar" });
    expect(rows.find((r) => r.correction === "pinhole")).toMatchObject({ notation: "PH 6/9", scale: "metric" });
    expect(rows.find((r) => r.distance === "near")).toMatchObject({ notation: "N8", scale: "n_point" });
  });

  it("records a diagnosis for one eye", async () => {
    const { params, exam } = await setup();
    expect(
      statusOf(
        await post("optometrist", params, {
          intent: "save",
          section: "assessment",
          "dx_H40.0": "right",
          "dx_Z01.0": "both",
        }),
      ),
    ).toBe(200);
    const rows = await db.select().from(examDiagnoses).where(eq(examDiagnoses.examId, exam.id));
    expect(rows.map((r) => `${r.code}:${r.eye}`).sort()).toEqual(["H40.0:right", "Z01.0:both"]);
  });
});

describe("who signs", () => {
  it("lets only the examining clinician sign; another clinician countersigns once, and both are shown", async () => {
    const { params, exam } = await setup();
    const refused = await post("owner", params, { intent: "sign" });
    expect(statusOf(refused)).toBe(403);
    expect((await db.select().from(exams).where(eq(exams.id, exam.id)))[0]!.status).toBe("in_progress");
    expect(statusOf(await post("owner", params, { intent: "countersign" }))).toBe(409);
    expect(statusOf(await post("optometrist", params, { intent: "sign", confirmed: "yes" }))).toBe(302);
    expect(statusOf(await post("optometrist", params, { intent: "countersign" }))).toBe(403);
    expect(
      statusOf(await post("owner", params, { intent: "countersign", note: "Reviewed the disc photographs." })),
    ).toBe(302);
    expect(statusOf(await post("owner", params, { intent: "countersign" }))).toBe(409);
    const owner = await userByEmail("owner@dioptra-demo.test");
    const rows = await db.select().from(examCountersignatures).where(eq(examCountersignatures.examId, exam.id));
    expect(rows).toMatchObject([{ clinicianId: owner.id, note: "Reviewed the disc photographs." }]);
    const d = dataOf<{
      exam: { signedBy: string };
      countersignatures: { clinician: string; note: string }[];
      canCountersign: boolean;
    }>(await run(examLoader, makeRequest("/x", { cookie: await cookieFor("owner") }), params));
    expect(d.exam.signedBy).toBeTruthy();
    expect(d.countersignatures).toHaveLength(1);
    expect(d.canCountersign).toBe(false);
  });
});

describe("signing with warnings, the visit, and a final refraction by addendum", () => {
  it("asks the examiner to confirm before signing without a final refraction, then signs", async () => {
    const { params, exam } = await setup();
    const asked = await post("optometrist", params, { intent: "sign" });
    expect(statusOf(asked)).toBe(409);
    const body = dataOf<{ confirm: string[] }>(asked);
    expect(body.confirm.join(" ")).toMatch(/no final refraction: no prescription can be issued/);
    expect((await db.select().from(exams).where(eq(exams.id, exam.id)))[0]!.status).toBe("in_progress");
    expect(statusOf(await post("optometrist", params, { intent: "sign", confirmed: "yes" }))).toBe(302);
    const [audit] = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "exam.signed"), eq(auditLog.entityId, exam.id)));
    expect(JSON.stringify(audit!.detail)).toMatch(/no final refraction/);
  });

  it("keeps a refused save's values and errors beside the section, names it by title when signing, clears it on save", async () => {
    const { params, exam } = await setup();
    await post("optometrist", params, {
      intent: "save",
      section: "refraction:final",
      right_rx: "-1.00 DS",
    });
    const refused = await post("optometrist", params, { intent: "save", section: "iop", left_mmHg: "31" });
    expect(statusOf(refused)).toBe(400);
    // The time of day is no longer demanded (it defaults to the save's time); the method still is.
    expect(Object.keys(dataOf<{ errors: Record<string, string[]> }>(refused).errors)).toEqual(["left_method"]);
    const [state] = await db.select().from(examSectionStates).where(eq(examSectionStates.examId, exam.id));
    expect(state).toBeDefined();
    const d = dataOf<{ sectionStates: Record<string, { savedAt: string | null; refused: { values: string[][] } }> }>(
      await run(examLoader, makeRequest("/x", { cookie: await cookieFor("optometrist") }), params),
    );
    expect(d.sectionStates.iop!.refused!.values).toContainEqual(["left_mmHg", "31"]);
    expect(d.sectionStates["refraction:final"]!.savedAt).toMatch(/^\d{4}-/);
    const asked = await post("optometrist", params, { intent: "sign" });
    expect(statusOf(asked)).toBe(409);
    const warnings = dataOf<{ confirm: string[] }>(asked).confirm.join(" ");
    expect(warnings).toContain("Intraocular pressure");
    expect(warnings).not.toMatch(/\biop\b/);

    const ok = await post("optometrist", params, {
      intent: "save",
      section: "iop",
      left_mmHg: "31",
      left_method: "goldmann",
    });
    expect(statusOf(ok)).toBe(200);
    const rows = await db.select().from(examIop).where(eq(examIop.examId, exam.id));
    expect(rows).toHaveLength(1);
    expect(rows[0]!.measuredTime).toMatch(/^\d\d:\d\d/);
    const after = dataOf<{ sectionStates: Record<string, { refused: unknown }> }>(
      await run(examLoader, makeRequest("/x", { cookie: await cookieFor("optometrist") }), params),
    );
    expect(after.sectionStates.iop!.refused).toBeNull();
    expect(statusOf(await post("optometrist", params, { intent: "sign" }))).toBe(302);
  });

  it("completes the appointment the exam was started from, with its history row, in the signing transaction", async () => {
    const { params, exam, patient } = await setup();
    const optom = await userByEmail("optometrist@dioptra-demo.test");
    const [type] = await db.select({ id: appointmentTypes.id }).from(appointmentTypes).limit(1);
    const start = new Date(Date.UTC(2020, 0, 6, 5, Math.floor(Math.random() * 50)));
    const [appt] = await db
      .insert(appointments)
      .values({
        patientId: patient.id,
        providerId: optom.id,
        appointmentTypeId: type!.id,
        startsAt: start,
        endsAt: new Date(start.getTime() + 10 * 60_000),
        status: "in_exam",
      })
      .returning();
    await db.update(exams).set({ appointmentId: appt!.id }).where(eq(exams.id, exam.id));
    await post("optometrist", params, { intent: "save", section: "refraction:final", right_rx: "+1.00 DS" });
    expect(statusOf(await post("optometrist", params, { intent: "sign" }))).toBe(302);
    const [after] = await db.select().from(appointments).where(eq(appointments.id, appt!.id));
    expect(after!.status).toBe("completed");
    expect(after!.statusChangedById).toBe(optom.id);
    const history = await db
      .select()
      .from(appointmentStatusChanges)
      .where(eq(appointmentStatusChanges.appointmentId, appt!.id));
    expect(history.map((h) => `${h.fromStatus}>${h.toStatus}`)).toEqual(["in_exam>completed"]);
    const [signedRow] = await db.select().from(exams).where(eq(exams.id, exam.id));
    expect(history[0]!.changedAt.getTime()).toBe(signedRow!.signedAt!.getTime());
  });

  it("takes a final refraction by addendum on an exam signed without one, issues a prescription from it, refuses a second", async () => {
    const { params, exam } = await setup();
    expect(statusOf(await post("optometrist", params, { intent: "sign", confirmed: "yes" }))).toBe(302);
    expect(
      statusOf(await post("optometrist", params, { intent: "issue-rx", kind: "spectacle", lensUse: "distance" })),
    ).toBe(409);
    const bad = await post("optometrist", params, {
      intent: "addendum",
      section: "Final",
      body: "Final refraction given after signing.",
      right_rx: "+1.00 -0.50 x 195",
    });
    expect(statusOf(bad)).toBe(400);
    expect(Object.keys(dataOf<{ errors: Record<string, string[]> }>(bad).errors)).toEqual(["right_rx"]);
    expect(await db.select().from(examAddenda).where(eq(examAddenda.examId, exam.id))).toHaveLength(0);
    const ok = await post("optometrist", params, {
      intent: "addendum",
      section: "Final",
      body: "Final refraction given after signing.",
      right_rx: "+1.00 -0.50 x 175",
      right_add: "+2.00",
      left_rx: "+1.25 DS",
      left_add: "+2.00",
    });
    expect(statusOf(ok)).toBe(302);
    const [ad] = await db.select().from(examAddenda).where(eq(examAddenda.examId, exam.id));
    const finals = await db.select().from(examRefractions).where(eq(examRefractions.examId, exam.id));
    expect(finals.map((f) => `${f.kind}:${f.eye}:${f.sphere}:${f.addPower}`).sort()).toEqual([
      "final:left:1.25:2",
      "final:right:1:2",
    ]);
    expect(finals.every((f) => f.addendumId === ad!.id)).toBe(true);
    expect(
      statusOf(await post("optometrist", params, { intent: "issue-rx", kind: "spectacle", lensUse: "distance" })),
    ).toBe(302);
    expect(await db.select().from(prescriptions).where(eq(prescriptions.examId, exam.id))).toHaveLength(1);
    const again = await post("owner", params, {
      intent: "addendum",
      section: "Final",
      body: "Another final.",
      right_rx: "+0.50 DS",
    });
    expect(statusOf(again)).toBe(409);
    expect(await db.select().from(examAddenda).where(eq(examAddenda.examId, exam.id))).toHaveLength(1);
  });
});
