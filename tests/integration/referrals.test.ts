import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { and, desc, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { PDFDocument } from "pdf-lib";
import {
  auditLog,
  documents,
  examAcuity,
  examAnteriorChamber,
  examAssessment,
  examDilations,
  examDiscs,
  examFundus,
  examPupils,
  examRedFlags,
  examColourVision,
  examCornealThickness,
  examHistory,
  examIop,
  examRefractions,
  exams,
  examVisualFields,
  patients,
  practiceSettings,
  referralEvents,
  referralLinks,
  referralMessages,
  referralReplies,
  referrals,
} from "~/db/schema";
import { loader as listLoader } from "~/routes/referrals/index";
import { loader as pdfLoader } from "~/routes/referrals/letter-pdf";
import { signLink, verifyLink } from "~/models/referrals/links.server";
import { action as newAction, loader as newLoader } from "~/routes/referrals/new";
import { action as referralAction, loader as referralLoader } from "~/routes/referrals/referral";
import {
  deliverReferralMessage,
  referralsForChart,
  smtpSender,
  trackingRows,
  useReferralMailSender,
} from "~/models/referrals/referrals.server";
import { action as replyAction, loader as replyLoader } from "~/routes/referrals/reply";
import { loader as replyLetterLoader } from "~/routes/referrals/reply-letter";
import { loader as chartLoader } from "~/routes/patients/chart";
import { action as patientEditAction } from "~/routes/patients/edit";
import { action as recipientsAction } from "~/routes/settings/recipients";
import { db } from "~/utils/db.server";
import { stopJobs } from "~/utils/jobs.server";
import { storage } from "~/utils/storage.server";
import { newRecipient } from "#tests/support/factories";
import {
  BASE,
  cookieFor,
  dataOf,
  linkIn,
  mailTo,
  makeRequest,
  run,
  statusOf,
  userByEmail,
} from "#tests/support/helpers";

const OPTOM = "optometrist@dioptra-demo.test";

/** A form body with repeated keys (checkbox lists). */
function post(path: string, cookie: string | undefined, fields: [string, string][]) {
  const body = new URLSearchParams();
  for (const [k, v] of fields) body.append(k, v);
  const headers = new Headers({ "content-type": "application/x-www-form-urlencoded" });
  if (cookie) headers.set("cookie", cookie);
  return new Request(`${BASE}${path}`, { method: "POST", headers, body });
}

/** A fictional patient with a signed exam: raised IOP right, enlarged blind spot right, known values throughout. */
async function fixtureExam(opts: { signed?: boolean } = {}) {
  const optom = await userByEmail(OPTOM);
  const [patient] = await db
    .insert(patients)
    .values({
      firstName: "Oriel",
      lastName: `Fenwick-Test${Math.floor(Math.random() * 1e6)}`,
      dateOfBirth: "1961-06-02",
      sex: "female",
      addressLine1: "9 Quarry Row",
      city: "Brackenford",
      postcode: "BF9 2ZZ",
      phone: "07700 900461",
      allergies: "Penicillin (rash)",
      gpName: "Dr Imogen Castellane",
      gpPractice: "Brackenford Health Centre",
      gpPhone: "01632 960 112",
    })
    .returning();
  const signed = opts.signed ?? true;
  const at = new Date(Date.now() - 2 * 3600_000);
  const [exam] = await db
    .insert(exams)
    .values({
      patientId: patient!.id,
      optometristId: optom.id,
      examinedAt: at,
      status: signed ? "signed" : "in_progress",
      signedAt: signed ? new Date() : null,
      signedById: signed ? optom.id : null,
    })
    .returning();
  const examId = exam!.id;
  await db.insert(examHistory).values({
    examId,
    reason: "Routine check; morning headaches",
    symptoms: "Headaches on waking",
    generalHistory: "Hypertension",
    medications: "Amlodipine 5 mg",
    familyHistory: "Mother: glaucoma",
  });
  await db.insert(examAcuity).values([
    { examId, eye: "right", distance: "distance", correction: "best", notation: "6/9", logMar: 0.18 },
    { examId, eye: "left", distance: "distance", correction: "best", notation: "6/6", logMar: 0 },
  ]);
  await db.insert(examRefractions).values([
    {
      examId,
      kind: "final",
      eye: "right",
      rawText: "-2.25 -0.75 x 175",
      sphere: -2.25,
      cylinder: -0.75,
      axis: 175,
      vaNotation: "6/9",
      vaLogMar: 0.18,
      addPower: 2,
    },
    {
      examId,
      kind: "final",
      eye: "left",
      rawText: "-2.00 DS",
      sphere: -2,
      cylinder: 0,
      axis: 180,
      vaNotation: "6/6",
      vaLogMar: 0,
      addPower: 2,
    },
  ]);
  await db.insert(examIop).values([
    { examId, eye: "right", mmHg: 27.5, method: "goldmann", measuredTime: "09:40" },
    { examId, eye: "left", mmHg: 18, method: "goldmann", measuredTime: "09:42" },
  ]);
  await db.insert(examColourVision).values([
    { examId, eye: "right", test: "plates_38", platesCorrect: 25, platesShown: 25, result: "normal" },
    { examId, eye: "left", test: "plates_38", platesCorrect: 24, platesShown: 25, result: "normal" },
  ]);
  await db.insert(examVisualFields).values([
    {
      examId,
      eye: "right",
      method: "automated",
      blindSpotXDeg: 15,
      blindSpotYDeg: -1.5,
      blindSpotWidthDeg: 9.5,
      blindSpotHeightDeg: 11,
      defectPresent: false,
      defects: "",
      reliability: "good",
    },
    {
      examId,
      eye: "left",
      method: "automated",
      blindSpotXDeg: 15,
      blindSpotYDeg: -1.5,
      blindSpotWidthDeg: 5.5,
      blindSpotHeightDeg: 7.5,
      defectPresent: false,
      defects: "",
      reliability: "good",
    },
  ]);
  await db.insert(examAssessment).values({
    examId,
    assessment: "Raised IOP right with an enlarged blind spot; suspected glaucoma.",
    plan: "Refer for glaucoma assessment; repeat IOP in 4 weeks if not seen.",
  });
  return { patient: patient!, exam: exam! };
}

const recipient = newRecipient;

/** Drafts a referral through the compose action, keeping every exam finding. */
async function draft(examId: string, recipientId: string | null, extra: [string, string][] = []) {
  const cookie = await cookieFor("optometrist");
  const page = dataOf<{
    kind: string;
    prompts: { code: string; eye: string }[];
    defaults: { reason: string; body: string; relevantHistory: string };
  }>(await run(newLoader, makeRequest(`/referrals/new?exam=${examId}`, { cookie })));
  expect(page.kind).toBe("compose");
  const fields: [string, string][] = [
    ["intent", "create"],
    ["urgency", "urgent"],
    ["reason", page.defaults.reason],
    ["body", page.defaults.body],
    ["relevantHistory", page.defaults.relevantHistory],
    ...page.prompts.map((p) => ["selectedFindings", `${p.code}:${p.eye}`] as [string, string]),
    ...extra,
  ];
  if (recipientId) fields.push(["recipientId", recipientId]);
  const res = await run(newAction, post(`/referrals/new?exam=${examId}`, cookie, fields));
  expect(statusOf(res)).toBe(302);
  const id = (res as Response).headers.get("location")!.match(/\/referrals\/([0-9a-f-]{36})/)![1]!;
  return { id, cookie, prompts: page.prompts };
}

/** The PDF's text: laid out as on the page, or in drawing order with whitespace collapsed (a wrapped table cell reads as one run). */
function pdfText(bytes: ArrayBuffer, mode: "layout" | "raw" = "layout") {
  const dir = mkdtempSync(join(tmpdir(), "referral-pdf-"));
  const file = join(dir, "letter.pdf");
  writeFileSync(file, Buffer.from(bytes));
  const out = execFileSync("pdftotext", [`-${mode}`, file, "-"], { encoding: "utf8" });
  return mode === "raw" ? out.replace(/\s+/g, " ") : out;
}

afterAll(async () => {
  useReferralMailSender(null);
  await stopJobs();
});

describe("the letter", () => {
  let referralId: string;
  let text: string;
  let raw: string;
  let examId: string;

  beforeAll(async () => {
    const { exam } = await fixtureExam();
    examId = exam.id;
    const rec = await recipient();
    ({ id: referralId } = await draft(exam.id, rec.id));
    const res = (await run(
      pdfLoader,
      makeRequest(`/referrals/${referralId}/letter.pdf`, { cookie: await cookieFor("optometrist") }),
      { referralId },
    )) as Response;
    expect(res.headers.get("content-type")).toBe("application/pdf");
    const bytes = await res.arrayBuffer();
    text = pdfText(bytes);
    raw = pdfText(bytes, "raw");
  });

  it("carries the exam's assessment and plan under their own heading", () => {
    expect(raw).toContain("Assessment and plan");
    expect(raw).toContain("Assessment: Raised IOP right with an enlarged blind spot; suspected glaucoma.");
    expect(raw).toContain("Plan: Refer for glaucoma assessment; repeat IOP in 4 weeks if not seen.");
  });

  it("carries exactly the exam's measured IOP, blind spots, acuity and refraction", async () => {
    // Every IOP reading of the exam, and no other, in the IOP table ("Right   1   27.5 mmHg   Goldmann applanation   09:40").
    const iopRows = await db.select().from(examIop).where(eq(examIop.examId, examId));
    const printed = [
      ...text.matchAll(/^\s*(Right|Left)\s+\d\s+(\d+(?:\.\d+)?) mmHg\s+(.+?)\s{2,}(\d\d:\d\d)\s*$/gm),
    ].map((m) => `${m[1]} ${m[2]} ${m[3]} ${m[4]}`);
    expect(printed.sort()).toEqual(
      iopRows
        .map(
          (r) => `${r.eye === "right" ? "Right" : "Left"} ${r.mmHg} Goldmann applanation ${r.measuredTime.slice(0, 5)}`,
        )
        .sort(),
    );
    // Blind spots: centre and size per eye, as measured.
    const fields = await db.select().from(examVisualFields).where(eq(examVisualFields.examId, examId));
    for (const f of fields) {
      expect(raw).toContain(
        `${f.eye === "right" ? "Right" : "Left"} Automated threshold ${f.blindSpotXDeg}°, ${f.blindSpotYDeg}° ${f.blindSpotWidthDeg}° × ${f.blindSpotHeightDeg}° None recorded Good`,
      );
    }
    // Acuity as recorded with its logMAR, and the final refraction in standard notation.
    expect(text).toMatch(/Right\s+Distance\s+Best corrected\s+6\/9\s+0\.18/);
    expect(text).toMatch(/Left\s+Distance\s+Best corrected\s+6\/6\s+0\.00/);
    expect(text).toMatch(/Right\s+-2\.25 -0\.75 x 175\s+\+2\.00/);
    expect(text).toMatch(/Left\s+-2\.00 DS\s+\+2\.00/);
    expect(raw).toContain("Right Pseudoisochromatic plates, 38-plate edition 25 of 25 Normal");
    expect(raw).toContain("Left Pseudoisochromatic plates, 38-plate edition 24 of 25 Normal");
  });

  it("lists the flagged findings with their values in plain words, without rule codes or citations", () => {
    // Each row: the finding, the eye, the measured value (mean of the applanation readings; NICE NG81 1.1.4 threshold 24 mmHg).
    expect(raw).toContain("Right IOP 27.5 mmHg by applanation (one reading): 24 mmHg or more Right 27.5 mmHg");
    expect(raw).toMatch(
      /Right blind spot enlarged: width 9\.5° .* Right 9\.5° × 11° centred 15° temporal, 1\.5° below/,
    );
    expect(raw).toContain("Mean IOP differs by 9.5 mmHg between the eyes (R 27.5, L 18, applanation) Both 9.5 mmHg");
    for (const code of [
      "Source:",
      "NICE",
      "College of Optometrists",
      "NG81",
      "C205",
      "IOP_ABOVE_NORMAL",
      "Rule that flagged",
    ])
      expect(raw).not.toContain(code);
  });

  it("states the urgency with triage's reasons in words, and the patient's telephone, GP, medications and allergies", () => {
    // Triage: applanation IOP of 24 mmHg or more is a routine referral (NICE NG81 1.1.4); an enlarged blind spot with no
    // headache recorded is soon, to examine the discs (NHS Scotland Eyecare Guidelines 11.6 Papilloedema: semi-urgent without
    // symptoms of raised intracranial pressure). The draft chose urgent (higher, no reason needed).
    expect(raw).toContain("Urgency: Urgent (to be seen within 7 days).");
    expect(raw).toContain(
      "The exam findings call for soon because of: • Right eye: enlarged blind spot without headache: examine the optic discs for swelling (soon) • Right eye: IOP 27.5 mmHg by applanation (one reading), 24 mmHg or more (routine)",
    );
    expect(raw).toContain("Telephone: 07700 900461");
    expect(raw).toContain("GP: Dr Imogen Castellane, Brackenford Health Centre, Tel 01632 960 112");
    expect(raw).toContain("Medications: Amlodipine 5 mg");
    expect(raw).toContain("Allergies: Penicillin (rash)");
    expect(raw).toContain("Intraocular pressure at the previous exam");
  });

  it("has letterhead, patient identifiers, signature block with licence, page numbers and the confidentiality footer", () => {
    expect(text).toContain("Larkspur Lane Eye Care");
    expect(text).toContain("2 Jun 1961");
    expect(text).toMatch(/Oriel Fenwick-Test\d+/);
    expect(text).toContain("Tobias Wren");
    expect(text).toContain("Registration no. 01-31982");
    expect(text).toMatch(/Page 1 of \d/);
    expect(text).toContain("Confidential: patient information for the named recipient only. If received in error");
    expect(text).toContain("Urgent (to be seen within 7 days)");
    expect(text).toContain("Mother: glaucoma");
  });

  it("runs to more pages when the text is long, numbering each", async () => {
    const long = Array.from({ length: 120 }, (_, i) => `Line ${i + 1} of a long clinical history.`).join("\n");
    const res = await run(
      referralAction,
      post(`/referrals/${referralId}`, await cookieFor("optometrist"), [
        ["intent", "save"],
        ["urgency", "urgent"],
        ["reason", "Raised IOP"],
        ["relevantHistory", long],
        ["selectedFindings", "IOP_ABOVE_NORMAL:right"],
      ]),
      { referralId },
    );
    expect(statusOf(res)).toBe(302);
    const pdf = (await run(
      pdfLoader,
      makeRequest(`/referrals/${referralId}/letter.pdf`, { cookie: await cookieFor("optometrist") }),
      { referralId },
    )) as Response;
    const t = pdfText(await pdf.arrayBuffer());
    const pages = Number(t.match(/Page 1 of (\d+)/)![1]);
    expect(pages).toBeGreaterThan(1);
    for (let i = 1; i <= pages; i++) expect(t).toContain(`Page ${i} of ${pages}`);
    expect(t).toContain("Line 120 of a long clinical history.");
  });
});

describe("enclosures", () => {
  it("appends a chosen PDF upload to the letter and lists every enclosure", async () => {
    const { exam, patient } = await fixtureExam();
    const optom = await userByEmail(OPTOM);
    // A two-page field printout, stored behind the storage interface like any upload.
    const printout = await PDFDocument.create();
    printout.addPage([595, 842]);
    printout.addPage([595, 842]);
    const key = await storage.put(await printout.save(), { prefix: "documents", extension: "pdf" });
    const [doc] = await db
      .insert(documents)
      .values({
        patientId: patient.id,
        examId: exam.id,
        kind: "field_printout",
        description: "Threshold 24-2, right eye",
        originalName: "fields-right.pdf",
        contentType: "application/pdf",
        sizeBytes: 1000,
        storageKey: key,
        uploadedById: optom.id,
      })
      .returning();
    const { id } = await draft(exam.id, null, [["attachmentIds", doc!.id]]);
    const res = (await run(
      pdfLoader,
      makeRequest(`/referrals/${id}/letter.pdf`, { cookie: await cookieFor("optometrist") }),
      { referralId: id },
    )) as Response;
    const bytes = await res.arrayBuffer();
    const letter = await PDFDocument.load(bytes);
    const t = pdfText(bytes);
    const pages = Number(t.match(/Page 1 of (\d+)/)![1]);
    expect(letter.getPageCount()).toBe(pages);
    expect(t).toContain("fields-right.pdf — Threshold 24-2, right eye (appended)");
    // The letter's own pages plus the printout's two, each numbered.
    expect(t).toContain(`Page ${pages - 1} of ${pages}`);
    expect(pages).toBeGreaterThanOrEqual(4);
    // Another patient's upload cannot be enclosed.
    const other = await fixtureExam();
    const [foreign] = await db
      .insert(documents)
      .values({
        patientId: other.patient.id,
        kind: "other",
        originalName: "x.pdf",
        contentType: "application/pdf",
        sizeBytes: 10,
        storageKey: key,
        uploadedById: optom.id,
      })
      .returning();
    const cookie = await cookieFor("optometrist");
    const bad = await run(
      referralAction,
      post(`/referrals/${id}`, cookie, [
        ["intent", "save"],
        ["urgency", "routine"],
        ["attachmentIds", foreign!.id],
      ]),
      { referralId: id },
    );
    expect(statusOf(bad)).toBe(400);
    expect(dataOf<{ error: Record<string, string[]> }>(bad).error.attachmentIds?.[0]).toMatch(
      /not one of this patient's uploads/,
    );
  });
});

describe("concurrency", () => {
  it("queues a letter once when two sends of the same draft race", async () => {
    const { exam } = await fixtureExam();
    const rec = await recipient();
    const { id, cookie } = await draft(exam.id, rec.id);
    const send = () =>
      run(
        referralAction,
        post(`/referrals/${id}`, cookie, [
          ["intent", "send"],
          ["urgency", "urgent"],
          ["reason", "Raised IOP"],
          ["recipientId", rec.id],
          ["selectedFindings", "IOP_ABOVE_NORMAL:right"],
        ]),
        { referralId: id },
      );
    const results = (await Promise.all([send(), send(), send()])).map(statusOf).sort();
    expect(results).toEqual([302, 409, 409]);
    expect(await db.select().from(referralMessages).where(eq(referralMessages.referralId, id))).toHaveLength(1);
    expect(await db.select().from(referralLinks).where(eq(referralLinks.referralId, id))).toHaveLength(1);
    expect(await mailTo(rec.email!)).toHaveLength(1);
    // The database holds the line too: one letter per referral, one live link.
    const refusal = async (write: Promise<unknown>) =>
      write.then(
        () => "written",
        (e: { cause?: { constraint?: string } }) => e.cause?.constraint,
      );
    expect(
      await refusal(db.insert(referralMessages).values({ referralId: id, kind: "letter", recipient: rec.email! })),
    ).toBe("referral_messages_one_letter_uq");
    expect(
      await refusal(db.insert(referralLinks).values({ referralId: id, expiresAt: new Date(Date.now() + 86400_000) })),
    ).toBe("referral_links_one_live_uq");
  });
});

describe("roles", () => {
  it("shows a receptionist the status of a referral but not its clinical content", async () => {
    const { exam } = await fixtureExam();
    const { id } = await draft(exam.id, (await recipient()).id);
    const cookie = await cookieFor("receptionist");
    const page = dataOf<Record<string, unknown>>(
      await run(referralLoader, makeRequest(`/referrals/${id}`, { cookie }), { referralId: id }),
    );
    expect(page.clinical).toBe(false);
    const json = JSON.stringify(page);
    expect(json).not.toContain("IOP");
    expect(json).not.toContain("headaches");
    expect(json).not.toContain("glaucoma");
    expect(page.summary).toMatchObject({ status: "draft" });
    // The letter, the compose page and every clinical action are refused.
    expect(
      statusOf(await run(pdfLoader, makeRequest(`/referrals/${id}/letter.pdf`, { cookie }), { referralId: id })),
    ).toBe(403);
    expect(statusOf(await run(newLoader, makeRequest(`/referrals/new?exam=${exam.id}`, { cookie })))).toBe(403);
    expect(
      statusOf(
        await run(
          referralAction,
          post(`/referrals/${id}`, cookie, [
            ["intent", "send"],
            ["urgency", "routine"],
          ]),
          { referralId: id },
        ),
      ),
    ).toBe(403);
    const [after] = await db.select({ status: referrals.status }).from(referrals).where(eq(referrals.id, id));
    expect(after!.status).toBe("draft");
    // The tracking list is open to the front desk.
    const list = dataOf<{ rows: { id: string; status: string }[] }>(
      await run(listLoader, makeRequest("/referrals", { cookie })),
    );
    expect(list.rows.find((r) => r.id === id)?.status).toBe("draft");
    expect(JSON.stringify(list.rows.find((r) => r.id === id))).not.toContain("IOP");
  });

  it("refuses patients, and the recipients directory to anyone but the owner", async () => {
    expect(statusOf(await run(listLoader, makeRequest("/referrals", { cookie: await cookieFor("patient") })))).toBe(
      403,
    );
    const res = await run(
      recipientsAction,
      makeRequest("/settings/recipients", {
        cookie: await cookieFor("optometrist"),
        form: { intent: "save", name: "Sneaky", preferredDelivery: "post" },
      }),
    );
    expect(statusOf(res)).toBe(403);
  });

  it("records every read of a referral by a clinician in the audit log", async () => {
    const { exam, patient } = await fixtureExam();
    const { id } = await draft(exam.id, null);
    const optom = await userByEmail(OPTOM);
    await run(referralLoader, makeRequest(`/referrals/${id}`, { cookie: await cookieFor("optometrist") }), {
      referralId: id,
    });
    const rows = await db
      .select()
      .from(auditLog)
      .where(and(eq(auditLog.action, "referral.read"), eq(auditLog.entityId, id)));
    expect(rows[0]).toMatchObject({ actorUserId: optom.id, patientId: patient.id });
  });
});

/** A red-flag visit: new flashes and floaters in the right eye with a retinal break; pupils, chamber, discs and dilation recorded. */
async function redFlagExam() {
  const { patient, exam } = await fixtureExam();
  const examId = exam.id;
  await db.update(patients).set({ allergies: "", phone: "07700 900462" }).where(eq(patients.id, patient.id));
  await db.insert(examRedFlags).values({ examId, flashes: "right", newFloaters: "right", notes: "Began two days ago" });
  await db.insert(examFundus).values([
    {
      examId,
      eye: "right",
      retinalBreak: true,
      vitreousDetachment: true,
      peripheryNotes: "Horseshoe tear at 11 o'clock",
    },
    { examId, eye: "left", maculaNotes: "Healthy" },
  ]);
  await db.insert(examPupils).values([
    { examId, eye: "right", equalReactive: true, sizeMm: 3.5 },
    { examId, eye: "left", equalReactive: true, sizeMm: 3.5 },
  ]);
  await db.insert(examAnteriorChamber).values([
    { examId, eye: "right", vanHerick: 3, cells: "none" },
    { examId, eye: "left", vanHerick: 3, cells: "none" },
  ]);
  await db.insert(examDiscs).values([
    { examId, eye: "right", verticalCd: 0.35, margins: "distinct" },
    { examId, eye: "left", verticalCd: 0.3, margins: "distinct" },
  ]);
  await db.insert(examDilations).values({
    examId,
    drug: "tropicamide",
    strengthPercent: 1,
    eye: "both",
    instilledAt: new Date(Date.now() - 2.5 * 3600_000),
  });
  await db.insert(examCornealThickness).values([
    { examId, eye: "right", micrometres: 538 },
    { examId, eye: "left", micrometres: 541 },
  ]);
  return { patient, exam };
}

describe("triage in the referral", () => {
  it("pre-fills same day for a retinal break with flashes, refuses a lower urgency without a reason, and keeps the reason given", async () => {
    // College of Optometrists GPP C205: symptomatic retinal breaks are an emergency (within 24 hours).
    const { exam } = await redFlagExam();
    const cookie = await cookieFor("optometrist");
    const page = dataOf<{
      kind: string;
      triage: { urgency: string; reasons: { text: string; source: string }[] };
      defaults: { urgency: string; reason: string };
    }>(await run(newLoader, makeRequest(`/referrals/new?exam=${exam.id}`, { cookie })));
    expect(page.triage.urgency).toBe("same_day");
    expect(page.defaults.urgency).toBe("same_day");
    expect(page.triage.reasons[0]!.text).toBe(
      "Right eye: retinal break with flashes, floaters or a shadow in the vision",
    );
    expect(page.triage.reasons[0]!.source).toMatch(/C205/);
    expect(page.defaults.reason).toContain("Right eye: retinal break with flashes");

    const rec = await recipient();
    const base: [string, string][] = [
      ["intent", "create"],
      ["recipientId", rec.id],
      ["reason", page.defaults.reason],
      ["additionalFindings", "Horseshoe tear right eye"],
    ];
    let res = await run(newAction, post(`/referrals/new?exam=${exam.id}`, cookie, [...base, ["urgency", "urgent"]]));
    expect(statusOf(res)).toBe(400);
    expect(dataOf<{ error: Record<string, string[]> }>(res).error.urgencyOverrideReason?.[0]).toMatch(
      /Triage proposed same day .* give your reason for choosing urgent/,
    );
    expect(await db.select().from(referrals).where(eq(referrals.examId, exam.id))).toHaveLength(0);

    res = await run(
      newAction,
      post(`/referrals/new?exam=${exam.id}`, cookie, [
        ...base,
        ["urgency", "urgent"],
        ["urgencyOverrideReason", "Seen at the eye unit this morning; laser booked for tomorrow"],
      ]),
    );
    expect(statusOf(res)).toBe(302);
    const [row] = await db.select().from(referrals).where(eq(referrals.examId, exam.id));
    expect(row!.proposedUrgency).toBe("same_day");
    expect(row!.urgency).toBe("urgent");
    expect(row!.urgencyOverrideReason).toBe("Seen at the eye unit this morning; laser booked for tomorrow");

    const pdf = (await run(pdfLoader, makeRequest(`/referrals/${row!.id}/letter.pdf`, { cookie }), {
      referralId: row!.id,
    })) as Response;
    const raw = pdfText(await pdf.arrayBuffer(), "raw");
    expect(raw).toContain(
      "The exam findings call for same day because of: • Right eye: retinal break with flashes, floaters or a shadow in the vision (same day)",
    );
    expect(raw).toContain(
      "The optometrist chose urgent rather than same day: Seen at the eye unit this morning; laser booked for tomorrow",
    );
    // Pupils, anterior chamber, disc and fundus, dilation, symptoms; allergies empty and not recorded as none.
    expect(raw).toContain("Pupils Eye Equal and reactive RAPD Anisocoria Size Notes Right Yes None — 3.5 mm");
    expect(raw).toContain("Anterior chamber Eye Van Herick grade Cells Hyphaema Hypopyon Notes Right 3 none None None");
    expect(raw).toContain(
      "Optic disc Eye Vertical C/D Margins Swelling Haemorrhage Pallor Notes Right 0.35 distinct None None None",
    );
    expect(raw).toContain("Right posterior vitreous detachment, retinal break — Horseshoe tear at 11 o'clock");
    expect(raw).toContain("Tropicamide 1% Both");
    expect(raw).toContain("Central corneal thickness Eye Thickness Right 538 µm Left 541 µm");
    expect(raw).toContain("Reported: flashes (right eye), new floaters (right eye). Began two days ago");
    expect(raw).toContain("Allergies: Not recorded");
    expect(raw).toContain("Telephone: 07700 900462");
    for (const code of ["C205", "NICE", "College of Optometrists", "Source:"]) expect(raw).not.toContain(code);
  });

  it("sends a red-flag letter whose only findings are triage's reasons (no measured prompt to keep)", async () => {
    // College of Optometrists GPP C205: symptomatic retinal breaks are an emergency; the letter refers on that alone.
    const { exam } = await redFlagExam();
    // No measured value of this exam raises a prompt: only the red flags and the fundus finding remain.
    for (const t of [examIop, examVisualFields, examColourVision, examAcuity])
      await db.delete(t).where(eq(t.examId, exam.id));
    const cookie = await cookieFor("optometrist");
    const page = dataOf<{ prompts: unknown[]; triage: { urgency: string }; defaults: { reason: string } }>(
      await run(newLoader, makeRequest(`/referrals/new?exam=${exam.id}`, { cookie })),
    );
    expect(page.prompts).toEqual([]);
    expect(page.triage.urgency).toBe("same_day");
    const rec = await recipient();
    const created = await run(
      newAction,
      post(`/referrals/new?exam=${exam.id}`, cookie, [
        ["intent", "create"],
        ["recipientId", rec.id],
        ["urgency", "same_day"],
        ["reason", page.defaults.reason],
      ]),
    );
    expect(statusOf(created)).toBe(302);
    const [row] = await db.select().from(referrals).where(eq(referrals.examId, exam.id));
    expect(row!.selectedFindings).toEqual([]);
    const sent = await run(
      referralAction,
      post(`/referrals/${row!.id}`, cookie, [
        ["intent", "send"],
        ["recipientId", rec.id],
        ["urgency", "same_day"],
        ["reason", page.defaults.reason],
      ]),
      { referralId: row!.id },
    );
    expect(statusOf(sent)).toBe(302);
    expect((await db.select().from(referrals).where(eq(referrals.id, row!.id)))[0]!.status).not.toBe("draft");
    expect(await mailTo(rec.email!)).toHaveLength(1);
  });

  it('keeps the override reason only while the urgency is lower, and writes "None known" when so recorded', async () => {
    const { patient, exam } = await redFlagExam();
    // Recorded as "no known allergies" with the text left empty.
    await db.update(patients).set({ allergies: "", noKnownAllergies: true }).where(eq(patients.id, patient.id));
    const cookie = await cookieFor("optometrist");
    const rec = await recipient();
    const res = await run(
      newAction,
      post(`/referrals/new?exam=${exam.id}`, cookie, [
        ["intent", "create"],
        ["recipientId", rec.id],
        ["urgency", "same_day"],
        ["reason", "Retinal tear"],
        ["additionalFindings", "Tear"],
        ["urgencyOverrideReason", "left over from an earlier choice"],
      ]),
    );
    expect(statusOf(res)).toBe(302);
    const [row] = await db.select().from(referrals).where(eq(referrals.examId, exam.id));
    expect(row!.urgencyOverrideReason).toBeNull();
    // Saving the draft at a lower urgency needs the reason too.
    const bad = await run(
      referralAction,
      post(`/referrals/${row!.id}`, cookie, [
        ["intent", "save"],
        ["recipientId", rec.id],
        ["urgency", "soon"],
        ["reason", "Retinal tear"],
        ["additionalFindings", "Tear"],
      ]),
      { referralId: row!.id },
    );
    expect(statusOf(bad)).toBe(400);
    expect((await db.select().from(referrals).where(eq(referrals.id, row!.id)))[0]!.urgency).toBe("same_day");
    const pdf = (await run(pdfLoader, makeRequest(`/referrals/${row!.id}/letter.pdf`, { cookie }), {
      referralId: row!.id,
    })) as Response;
    expect(pdfText(await pdf.arrayBuffer(), "raw")).toContain("Allergies: None known");
  });
});

describe("the patient's GP and allergies, from the patient form to the letter", () => {
  it('keeps the GP and "no known allergies" from the edit form, shows them on the chart and prints them in the letter', async () => {
    const { patient, exam } = await fixtureExam();
    const cookie = await cookieFor("optometrist");
    const form = {
      firstName: patient.firstName,
      lastName: patient.lastName,
      dateOfBirth: patient.dateOfBirth,
      phone: "07700 900461",
      gpName: "Dr Halcyon Marsh-Ibekwe",
      gpPractice: "Quarry Row Surgery",
      gpAddress: "2 Quarry Row, Brackenford BF9 2ZY",
      gpPhone: "01632 960 245",
      confirmDuplicate: "yes",
    };
    // Allergies listed and "none known" ticked contradict each other: refused, nothing saved.
    const bad = await run(
      patientEditAction,
      makeRequest(`/patients/${patient.id}/edit`, {
        cookie,
        form: { ...form, allergies: "Penicillin (rash)", noKnownAllergies: "on", gpPhone: "ask reception" },
      }),
      { patientId: patient.id },
    );
    expect(statusOf(bad)).toBe(400);
    const errors = dataOf<{ error: Record<string, string[]> }>(bad).error;
    expect(Object.keys(errors).sort()).toEqual(["gpPhone", "noKnownAllergies"]);
    expect(errors.noKnownAllergies![0]).toMatch(/clear the list or untick "No known allergies"/);
    expect((await db.select().from(patients).where(eq(patients.id, patient.id)))[0]).toMatchObject({
      gpName: "Dr Imogen Castellane",
      noKnownAllergies: false,
    });

    const ok = await run(
      patientEditAction,
      makeRequest(`/patients/${patient.id}/edit`, { cookie, form: { ...form, allergies: "", noKnownAllergies: "on" } }),
      { patientId: patient.id },
    );
    expect(statusOf(ok)).toBe(302);
    expect((await db.select().from(patients).where(eq(patients.id, patient.id)))[0]).toMatchObject({
      gpName: "Dr Halcyon Marsh-Ibekwe",
      gpPractice: "Quarry Row Surgery",
      gpPhone: "01632 960 245",
      allergies: "",
      noKnownAllergies: true,
    });
    const chart = dataOf<{ patient: { gp: string; allergies: string; noKnownAllergies: boolean } }>(
      await run(chartLoader, makeRequest(`/patients/${patient.id}`, { cookie }), { patientId: patient.id }),
    );
    expect(chart.patient).toMatchObject({
      gp: "Dr Halcyon Marsh-Ibekwe, Quarry Row Surgery, 2 Quarry Row, Brackenford BF9 2ZY, Tel 01632 960 245",
      allergies: "",
      noKnownAllergies: true,
    });

    const rec = await recipient();
    const { id } = await draft(exam.id, rec.id);
    const pdf = (await run(pdfLoader, makeRequest(`/referrals/${id}/letter.pdf`, { cookie }), {
      referralId: id,
    })) as Response;
    const raw = pdfText(await pdf.arrayBuffer(), "raw");
    expect(raw).toContain(
      "GP: Dr Halcyon Marsh-Ibekwe, Quarry Row Surgery, 2 Quarry Row, Brackenford BF9 2ZY, Tel 01632 960 245",
    );
    expect(raw).toContain("Allergies: None known");
  });
});

describe("candidates", () => {
  it("lists a signed exam with flagged findings until it has a referral", async () => {
    const { exam } = await fixtureExam();
    const cookie = await cookieFor("optometrist");
    const list = async () =>
      dataOf<{ candidates: { id: string; prompts: string[] }[] }>(
        await run(newLoader, makeRequest("/referrals/new", { cookie })),
      ).candidates;
    const found = (await list()).find((c) => c.id === exam.id);
    expect(found?.prompts).toContain("Right IOP 27.5 mmHg by applanation (one reading): 24 mmHg or more");
    expect(found?.prompts).toContain("Routine: Right eye: IOP 27.5 mmHg by applanation (one reading), 24 mmHg or more");
    await draft(exam.id, null);
    expect((await list()).some((c) => c.id === exam.id)).toBe(false);
  });
});

describe("bad input", () => {
  it("will not draft from an unsigned exam; the compose page says to sign it", async () => {
    const { exam } = await fixtureExam({ signed: false });
    const cookie = await cookieFor("optometrist");
    expect(
      dataOf<{ kind: string }>(await run(newLoader, makeRequest(`/referrals/new?exam=${exam.id}`, { cookie }))).kind,
    ).toBe("unsigned");
    const res = await run(
      newAction,
      post(`/referrals/new?exam=${exam.id}`, cookie, [
        ["intent", "create"],
        ["urgency", "routine"],
        ["reason", "x"],
      ]),
    );
    expect(statusOf(res)).toBe(409);
    expect(JSON.stringify(dataOf(res))).toContain("not signed");
    expect(await db.select().from(referrals).where(eq(referrals.examId, exam.id))).toHaveLength(0);
  });

  it("asks for a recipient with an e-mail address and for findings before sending", async () => {
    const { exam } = await fixtureExam();
    const cookie = await cookieFor("optometrist");
    const { id } = await draft(exam.id, null);
    let res = await run(
      referralAction,
      post(`/referrals/${id}`, cookie, [
        ["intent", "send"],
        ["urgency", "urgent"],
        ["reason", "Raised IOP"],
        ["selectedFindings", "IOP_ABOVE_NORMAL:right"],
      ]),
      { referralId: id },
    );
    expect(statusOf(res)).toBe(400);
    expect(dataOf<{ error: Record<string, string[]> }>(res).error.recipientId?.[0]).toMatch(/recipient with an e-mail/);
    const postal = await recipient(null);
    res = await run(
      referralAction,
      post(`/referrals/${id}`, cookie, [
        ["intent", "send"],
        ["urgency", "urgent"],
        ["reason", "Raised IOP"],
        ["recipientId", postal.id],
        ["selectedFindings", "IOP_ABOVE_NORMAL:right"],
      ]),
      { referralId: id },
    );
    expect(dataOf<{ error: Record<string, string[]> }>(res).error.recipientId?.[0]).toMatch(/e-mail/);
    const rec = await recipient();
    // A letter with no finding kept, none described and no triage reason to state has nothing to refer on.
    const [drafted] = await db.select().from(referrals).where(eq(referrals.id, id));
    await db
      .update(referrals)
      .set({ snapshot: { ...drafted!.snapshot, triage: null } })
      .where(eq(referrals.id, id));
    res = await run(
      referralAction,
      post(`/referrals/${id}`, cookie, [
        ["intent", "send"],
        ["urgency", "urgent"],
        ["reason", "Raised IOP"],
        ["recipientId", rec.id],
      ]),
      { referralId: id },
    );
    expect(statusOf(res)).toBe(400);
    expect(dataOf<{ error: Record<string, string[]> }>(res).error.additionalFindings?.[0]).toMatch(
      /at least one finding/,
    );
    // A finding that is not the exam's is refused too.
    res = await run(
      referralAction,
      post(`/referrals/${id}`, cookie, [
        ["intent", "save"],
        ["urgency", "urgent"],
        ["selectedFindings", "MADE_UP:left"],
      ]),
      { referralId: id },
    );
    expect(statusOf(res)).toBe(400);
    const [row] = await db.select().from(referrals).where(eq(referrals.id, id));
    expect(row!.status).toBe("draft");
    expect(await db.select().from(referralMessages).where(eq(referralMessages.referralId, id))).toHaveLength(0);
  });

  it("answers field errors for a bad recipient entry", async () => {
    const res = await run(
      recipientsAction,
      makeRequest("/settings/recipients", {
        cookie: await cookieFor("owner"),
        form: { intent: "save", name: "", email: "not-an-email", preferredDelivery: "email" },
      }),
    );
    expect(statusOf(res)).toBe(400);
    const err = dataOf<{ result: { error: Record<string, string[]> } }>(res).result.error;
    expect(err.name?.[0]).toMatch(/name/);
    expect(err.email?.[0]).toMatch(/valid e-mail/);
  });
});

describe("sending and the recipient's link", () => {
  it("keeps the referral queued when SMTP fails, then sends it with the PDF once the relay answers", async () => {
    const { exam } = await fixtureExam();
    const rec = await recipient();
    const { id, cookie } = await draft(exam.id, rec.id);
    useReferralMailSender(smtpSender(1)); // nothing listens on port 1
    try {
      const res = await run(
        referralAction,
        post(`/referrals/${id}`, cookie, [
          ["intent", "send"],
          ["urgency", "urgent"],
          ["reason", "Raised IOP right"],
          ["recipientId", rec.id],
          ["selectedFindings", "IOP_ABOVE_NORMAL:right"],
        ]),
        { referralId: id },
      );
      expect(statusOf(res)).toBe(302);
    } finally {
      useReferralMailSender(null);
    }
    const [queued] = await db.select().from(referrals).where(eq(referrals.id, id));
    expect(queued!.status).toBe("queued");
    const [msg] = await db.select().from(referralMessages).where(eq(referralMessages.referralId, id));
    expect(msg).toMatchObject({ status: "queued", kind: "letter", recipient: rec.email, attempts: 1 });
    expect(msg!.lastError).toMatch(/ECONNREFUSED|connect/i);
    expect(await mailTo(rec.email!)).toHaveLength(0);
    // The queue's retry (the job's handler) delivers it.
    expect(await deliverReferralMessage(msg!.id, { retryCount: 1, retryLimit: 8 })).toBe("sent");
    expect(await deliverReferralMessage(msg!.id, { retryCount: 2, retryLimit: 8 })).toBe("already done");
    const [sent] = await db.select().from(referrals).where(eq(referrals.id, id));
    expect(sent!.status).toBe("sent");
    expect(sent!.timeFrameDays).toBe(7);
    const mails = await mailTo(rec.email!);
    expect(mails).toHaveLength(1);
    expect(mails[0]!.subject).toMatch(/^Referral REF-\d{5} \(Urgent\)/);
    expect(mails[0]!.subject).not.toContain("Fenwick");
    expect(mails[0]!.attachments.map((a) => a.filename)).toEqual([expect.stringMatching(/^referral-REF-\d{5}\.pdf$/)]);
    expect(linkIn(mails[0]!.text, "/r/").pathname).toMatch(/^\/r\/[\w-]+\.[\w-]+$/);
  });

  it("marks a message failed after the last retry, with its reason, and queues it again on request", async () => {
    const { exam } = await fixtureExam();
    const rec = await recipient();
    const { id, cookie } = await draft(exam.id, rec.id);
    useReferralMailSender(smtpSender(1));
    try {
      await run(
        referralAction,
        post(`/referrals/${id}`, cookie, [
          ["intent", "send"],
          ["urgency", "soon"],
          ["reason", "Raised IOP"],
          ["recipientId", rec.id],
          ["selectedFindings", "IOP_ABOVE_NORMAL:right"],
        ]),
        { referralId: id },
      );
      const [msg] = await db.select().from(referralMessages).where(eq(referralMessages.referralId, id));
      await expect(deliverReferralMessage(msg!.id, { retryCount: 8, retryLimit: 8 })).rejects.toThrow();
      const [failed] = await db.select().from(referralMessages).where(eq(referralMessages.id, msg!.id));
      expect(failed).toMatchObject({ status: "failed", attempts: 2 });
      const page = dataOf<{ summary: { messages: { status: string; error: string }[]; status: string } }>(
        await run(referralLoader, makeRequest(`/referrals/${id}`, { cookie }), { referralId: id }),
      );
      expect(page.summary.status).toBe("queued");
      expect(page.summary.messages[0]).toMatchObject({ status: "failed" });
      expect(page.summary.messages[0]!.error).toMatch(/ECONNREFUSED|connect/i);
      useReferralMailSender(null);
      const res = await run(
        referralAction,
        post(`/referrals/${id}`, cookie, [
          ["intent", "retry"],
          ["messageId", msg!.id],
        ]),
        { referralId: id },
      );
      expect(statusOf(res)).toBe(302);
      const [again] = await db.select().from(referralMessages).where(eq(referralMessages.id, msg!.id));
      expect(again!.status).toBe("sent");
    } finally {
      useReferralMailSender(null);
    }
  });

  it("verifies the link's signature and expiry, ties it to its referral, and revokes it on withdrawal", async () => {
    const { exam } = await fixtureExam();
    const rec = await recipient();
    const a = await draft(exam.id, rec.id);
    await run(
      referralAction,
      post(`/referrals/${a.id}`, a.cookie, [
        ["intent", "send"],
        ["urgency", "urgent"],
        ["reason", "Raised IOP"],
        ["recipientId", rec.id],
        ["selectedFindings", "IOP_ABOVE_NORMAL:right"],
      ]),
      { referralId: a.id },
    );
    const [link] = await db.select().from(referralLinks).where(eq(referralLinks.referralId, a.id));
    const token = signLink(link!);
    expect(await verifyLink(token)).toMatchObject({ ok: true, referralId: a.id, linkId: link!.id });
    // Tampering: a changed payload (another referral's id) or a changed signature fail the signature check.
    const [payload, sig] = token.split(".") as [string, string];
    const other = (await fixtureExam()).exam;
    const b = await draft(other.id, rec.id);
    const forgedPayload = Buffer.from(
      JSON.stringify({ ...JSON.parse(Buffer.from(payload, "base64url").toString()), r: b.id }),
    ).toString("base64url");
    expect(await verifyLink(`${forgedPayload}.${sig}`)).toMatchObject({ ok: false, reason: "bad signature" });
    expect(await verifyLink(`${payload}.${sig.slice(0, -2)}${sig.endsWith("AA") ? "BB" : "AA"}`)).toMatchObject({
      ok: false,
      reason: "bad signature",
    });
    expect(await verifyLink("garbage")).toMatchObject({ ok: false, reason: "malformed" });
    // A correctly signed token naming this link but another referral is refused: a link works only for its referral.
    expect(await verifyLink(signLink({ id: link!.id, referralId: b.id, expiresAt: link!.expiresAt }))).toMatchObject({
      ok: false,
      reason: "unknown",
    });
    // Expiry: past the signed expiry it is refused.
    expect(await verifyLink(token, new Date(link!.expiresAt.getTime() + 1000))).toMatchObject({
      ok: false,
      reason: "expired",
    });
    expect(await verifyLink(signLink({ ...link!, expiresAt: new Date(Date.now() - 1000) }))).toMatchObject({
      ok: false,
      reason: "expired",
    });

    // The page for a tampered link reveals nothing and is audited.
    const bad = await run(replyLoader, makeRequest(`/r/${forgedPayload}.${sig}`), { token: `${forgedPayload}.${sig}` });
    expect(statusOf(bad)).toBe(404);
    expect(JSON.stringify(dataOf(bad))).not.toMatch(/Fenwick|IOP|Raised/);
    const [refused] = await db
      .select()
      .from(auditLog)
      .where(eq(auditLog.action, "referral.link_refused"))
      .orderBy(desc(auditLog.at))
      .limit(1);
    expect(refused!.detail).toMatchObject({ reason: "bad signature" });
    expect(
      statusOf(
        await run(replyLetterLoader, makeRequest(`/r/${forgedPayload}.${sig}/letter.pdf`), {
          token: `${forgedPayload}.${sig}`,
        }),
      ),
    ).toBe(404);

    // The good link works and is audited; after withdrawal it is refused as expired.
    const ok = dataOf<{ state: string; summary: { reason: string } }>(
      await run(replyLoader, makeRequest(`/r/${token}`), { token }),
    );
    expect(ok.state).toBe("ok");
    expect(
      await db
        .select()
        .from(auditLog)
        .where(and(eq(auditLog.action, "referral.link_opened"), eq(auditLog.entityId, a.id))),
    ).toHaveLength(1);
    await run(referralAction, post(`/referrals/${a.id}`, a.cookie, [["intent", "withdraw"]]), { referralId: a.id });
    const gone = await run(replyLoader, makeRequest(`/r/${token}`), { token });
    expect(statusOf(gone)).toBe(410);
    expect(dataOf<{ state: string }>(gone).state).toBe("refused");
  });

  it("lets the recipient acknowledge, give a date and reply with a consult letter; the reply reaches the chart and the optometrist", async () => {
    const { exam, patient } = await fixtureExam();
    const rec = await recipient();
    const { id, cookie } = await draft(exam.id, rec.id);
    await run(
      referralAction,
      post(`/referrals/${id}`, cookie, [
        ["intent", "send"],
        ["urgency", "urgent"],
        ["reason", "Raised IOP"],
        ["recipientId", rec.id],
        ["selectedFindings", "IOP_ABOVE_NORMAL:right"],
      ]),
      { referralId: id },
    );
    const [mail] = await mailTo(rec.email!);
    const token = linkIn(mail!.text, "/r/").pathname.slice(3);
    const form = (fields: Record<string, string | Blob>) => {
      const fd = new FormData();
      for (const [k, v] of Object.entries(fields)) fd.append(k, v);
      return new Request(`${BASE}/r/${token}`, { method: "POST", body: fd });
    };
    expect(statusOf(await run(replyAction, form({ intent: "acknowledge", name: "" }), { token }))).toBe(400);
    expect(statusOf(await run(replyAction, form({ intent: "acknowledge", name: "Dr Test Surgeon" }), { token }))).toBe(
      200,
    );
    // A second acknowledgement is refused, saying when and by whom; only one is recorded.
    const second = await run(replyAction, form({ intent: "acknowledge", name: "Dr Someone Else" }), { token });
    expect(statusOf(second)).toBe(409);
    expect(dataOf<{ result: { error: Record<string, string[]> } }>(second).result.error[""]![0]).toMatch(
      /^Receipt was already acknowledged on .+ by Dr Test Surgeon\.$/,
    );
    const acks = await db
      .select()
      .from(referralEvents)
      .where(and(eq(referralEvents.referralId, id), eq(referralEvents.kind, "acknowledged")));
    expect(acks).toHaveLength(1);
    expect(
      statusOf(
        await run(replyAction, form({ intent: "appointment", name: "Dr Test Surgeon", date: "2026-02-30" }), { token }),
      ),
    ).toBe(400);
    const soon = new Date(Date.now() + 5 * 86400_000).toISOString().slice(0, 10);
    expect(
      statusOf(await run(replyAction, form({ intent: "appointment", name: "Dr Test Surgeon", date: soon }), { token })),
    ).toBe(200);
    let [row] = await db.select().from(referrals).where(eq(referrals.id, id));
    expect(row).toMatchObject({ status: "acknowledged", acknowledgedBy: "Dr Test Surgeon", appointmentOn: soon });
    // A reply needs text or a file; a file must really be a PDF or image.
    expect(
      statusOf(await run(replyAction, form({ intent: "reply", name: "Dr Test Surgeon", body: "" }), { token })),
    ).toBe(400);
    const fake = await run(
      replyAction,
      form({
        intent: "reply",
        name: "Dr Test Surgeon",
        body: "",
        file: new File([new TextEncoder().encode("<html>not a pdf</html>")], "letter.pdf", { type: "application/pdf" }),
      }),
      { token },
    );
    expect(statusOf(fake)).toBe(400);
    const pdf = new File([new TextEncoder().encode("%PDF-1.4\n%test consult letter\n")], "consult.pdf", {
      type: "application/pdf",
    });
    expect(
      statusOf(
        await run(
          replyAction,
          form({
            intent: "reply",
            name: "Dr Test Surgeon",
            body: "Seen; started on drops. Review in 6 weeks.",
            file: pdf,
          }),
          { token },
        ),
      ),
    ).toBe(200);
    [row] = await db.select().from(referrals).where(eq(referrals.id, id));
    expect(row!.status).toBe("replied");
    const [saved] = await db.select().from(referralReplies).where(eq(referralReplies.referralId, id));
    expect(saved).toMatchObject({
      patientId: patient.id,
      authorName: "Dr Test Surgeon",
      fileName: "consult.pdf",
      fileType: "application/pdf",
    });
    const chart = await referralsForChart(patient.id, { clinical: true });
    expect(chart[0]!.replies[0]!.body).toBe("Seen; started on drops. Review in 6 weeks.");
    expect((await referralsForChart(patient.id, { clinical: false }))[0]!.replies[0]!.body).toBeNull();
    const notices = await mailTo(OPTOM);
    expect(notices.some((m) => m.subject.includes("Reply received") && m.text.includes(`/referrals/${id}`))).toBe(true);
    // Opening the referral marks the reply read, once.
    const first = dataOf<{ replies: { isNew: boolean }[] }>(
      await run(referralLoader, makeRequest(`/referrals/${id}`, { cookie }), { referralId: id }),
    );
    expect(first.replies.map((x) => x.isNew)).toEqual([true]);
    const again = dataOf<{ replies: { isNew: boolean }[] }>(
      await run(referralLoader, makeRequest(`/referrals/${id}`, { cookie }), { referralId: id }),
    );
    expect(again.replies.map((x) => x.isNew)).toEqual([false]);
    expect((await db.select().from(referralReplies).where(eq(referralReplies.referralId, id)))[0]!.readById).toBe(
      (await userByEmail(OPTOM)).id,
    );
    const actions = (await db.select({ action: auditLog.action }).from(auditLog).where(eq(auditLog.entityId, id))).map(
      (r) => r.action,
    );
    expect(actions).toEqual(
      expect.arrayContaining(["referral.link_acknowledged", "referral.link_appointment_set", "referral.link_replied"]),
    );
  });
});

describe("tracking", () => {
  it("shows a referral overdue past its urgency's time frame and lets the desk chase it once", async () => {
    const { exam } = await fixtureExam();
    const rec = await recipient();
    const { id, cookie } = await draft(exam.id, rec.id);
    await run(
      referralAction,
      post(`/referrals/${id}`, cookie, [
        ["intent", "send"],
        ["urgency", "urgent"],
        ["reason", "Raised IOP"],
        ["recipientId", rec.id],
        ["selectedFindings", "IOP_ABOVE_NORMAL:right"],
      ]),
      { referralId: id },
    );
    const [p] = await db.select().from(practiceSettings);
    expect(p!.referralDaysUrgent).toBe(7);
    expect((await trackingRows()).find((r) => r.id === id)?.status).toBe("sent");
    await db
      .update(referrals)
      .set({ sentAt: new Date(Date.now() - 8 * 86400_000) })
      .where(eq(referrals.id, id));
    const row = (await trackingRows()).find((r) => r.id === id)!;
    expect(row).toMatchObject({ status: "overdue", canChase: true });
    const desk = await cookieFor("receptionist");
    expect(
      statusOf(await run(referralAction, post(`/referrals/${id}`, desk, [["intent", "chase"]]), { referralId: id })),
    ).toBe(302);
    const chasers = (await mailTo(rec.email!)).filter((m) => m.subject.startsWith("Reminder: referral"));
    expect(chasers).toHaveLength(1);
    expect(linkIn(chasers[0]!.text, "/r/")).toBeTruthy();
    // Not again within three days.
    expect(
      statusOf(await run(referralAction, post(`/referrals/${id}`, desk, [["intent", "chase"]]), { referralId: id })),
    ).toBe(409);
  });
});
