import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { action as examAction } from "~/routes/exams/exam";
import { loader as pdfLoader } from "~/routes/patients/prescription-pdf";
import { addMonths, contactLensPower } from "~/models/prescriptions/prescriptions.server";
import { contactLenses, prescriptionEyes, prescriptions } from "~/db/schema";
import { db } from "~/utils/db.server";
import { newExam } from "#tests/support/factories";
import { cookieFor, dataOf, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";

const uniq = () => Math.random().toString(36).slice(2, 8);

async function signedExam(sign = true) {
  return newExam({
    patient: { firstName: "Rx", lastName: `Holder${uniq()}`, dateOfBirth: "1970-01-02" },
    signed: sign,
    refractions: [
      {
        kind: "final",
        eye: "right",
        rawText: "-6.00 DS",
        sphere: -6,
        cylinder: 0,
        axis: 180,
        addPower: null,
        vertexMm: 12,
      },
      {
        kind: "final",
        eye: "left",
        rawText: "-4.00 -1.00 x 180",
        sphere: -4,
        cylinder: -1,
        axis: 180,
        prismDioptres: 1,
        prismBase: "up",
      },
    ],
  });
}

const issue = async (role: string, params: { patientId: string; examId: string }, form: Record<string, string>) =>
  run(
    examAction,
    makeRequest(`/patients/${params.patientId}/exams/${params.examId}`, {
      cookie: await cookieFor(role),
      form: { intent: "issue-rx", ...form },
    }),
    params,
  );

const saveFitting = async (params: { patientId: string; examId: string }, form: Record<string, string>) =>
  run(
    examAction,
    makeRequest(`/patients/${params.patientId}/exams/${params.examId}`, {
      cookie: await cookieFor("optometrist"),
      form: { intent: "save", section: "cl_fitting", ...form },
    }),
    params,
  );

function pdfText(bytes: ArrayBuffer) {
  const dir = mkdtempSync(join(tmpdir(), "rx-pdf-"));
  const file = join(dir, "rx.pdf");
  writeFileSync(file, Buffer.from(bytes));
  return execFileSync("pdftotext", ["-layout", file, "-"]).toString();
}

describe("contact-lens power", () => {
  it("converts spectacle to corneal plane meridian by meridian and rounds to 0.25 D", () => {
    // Effective power F_c = F / (1 − d·F), d = vertex distance in metres (common practice; any optics handbook).
    const sphere = contactLensPower({ sphere: -6, cylinder: 0, axis: 180 }, 12);
    expect(sphere.exact.sphere).toBeCloseTo(-5.597, 3);
    expect(sphere.rounded).toEqual({ sphere: -5.5, cylinder: 0, axis: 180 });
    const toric = contactLensPower({ sphere: -4, cylinder: -1, axis: 180 }, 12);
    expect(toric.exact.sphere).toBeCloseTo(-3.817, 3);
    expect(toric.exact.cylinder).toBeCloseTo(-0.9, 3);
    expect(toric.rounded).toEqual({ sphere: -3.75, cylinder: -1, axis: 180 });
  });

  it("adds months to a date, clamping to the month's end", () => {
    expect(addMonths(new Date("2026-01-31T10:00:00Z"), 1)).toBe("2026-02-28");
    expect(addMonths(new Date("2026-12-02T10:00:00Z"), 24)).toBe("2028-12-02");
  });
});

describe("issuing prescriptions", () => {
  it("refuses an unsigned exam and the front desk", async () => {
    const unsigned = await signedExam(false);
    expect(statusOf(await issue("optometrist", unsigned.params, { kind: "spectacle", lensUse: "distance" }))).toBe(409);
    const signed = await signedExam();
    expect(statusOf(await issue("receptionist", signed.params, { kind: "spectacle", lensUse: "distance" }))).toBe(403);
    expect(statusOf(await issue("optometrist", signed.params, { kind: "spectacle" }))).toBe(400);
    expect(statusOf(await issue("optometrist", signed.params, { kind: "bifocal-goggles" }))).toBe(400);
    expect(await db.select().from(prescriptions).where(eq(prescriptions.patientId, signed.patient.id))).toHaveLength(0);
  });

  it("issues a spectacle prescription with the practice's validity and a PDF the front desk can print", async () => {
    const { params, patient } = await signedExam();
    expect(
      statusOf(
        await issue("optometrist", params, {
          kind: "spectacle",
          lensUse: "varifocal",
          statement: "no_change",
          referred: "on",
          notes: "Anti-reflection coating",
          right_intAdd: "1.00",
          right_pd: "32",
          right_pdNear: "30.5",
          left_pd: "31.5",
        }),
      ),
    ).toBe(302);
    const [rx] = await db.select().from(prescriptions).where(eq(prescriptions.patientId, patient.id));
    expect(rx).toMatchObject({
      kind: "spectacle",
      prescriberName: "Tobias Wren",
      prescriberLicence: "01-31982",
      expiresOn: addMonths(rx!.issuedAt, 24),
    });
    const eyes = await db.select().from(prescriptionEyes).where(eq(prescriptionEyes.prescriptionId, rx!.id));
    expect(eyes.find((e) => e.eye === "left")).toMatchObject({
      sphere: -4,
      cylinder: -1,
      axis: 180,
      prismDioptres: 1,
      prismBase: "up",
      prismVertical: 1,
      prismVerticalBase: "up",
      prismHorizontal: null,
      // Not measured for the left eye: none is stored or printed.
      vertexMm: null,
      pdDistanceMm: 31.5,
    });
    expect(eyes.find((e) => e.eye === "right")).toMatchObject({ vertexMm: 12, intermediateAdd: 1, pdNearMm: 30.5 });

    const res = (await run(pdfLoader, makeRequest("/x", { cookie: await cookieFor("receptionist") }), {
      patientId: patient.id,
      prescriptionId: rx!.id,
    })) as Response;
    expect(res.status).toBe(200);
    expect(res.headers.get("content-type")).toBe("application/pdf");
    const text = pdfText(await res.arrayBuffer());
    expect(text).toContain("Larkspur Lane Eye Care");
    expect(text).toContain("Spectacle prescription");
    expect(text).toContain(`Rx ${patient.lastName}`);
    expect(text).toContain("Tobias Wren");
    expect(text).toContain("01-31982");
    expect(text).toContain("\u22126.00"); // printed with the minus sign U+2212
    expect(text).toContain("Cautions");
    expect(text).toMatch(/Page 1 of 1/);
    // College of Optometrists, Guidance for Professional Practice, "Prescribing spectacles" (A330–A335):
    // the no-change statement, what the spectacles are for, and the prescriber's registration.
    expect(text).toContain("No clinically significant change.");
    expect(text).toContain("Varifocal");
    expect(text).toMatch(/Referred\s+Yes/);
    expect(text).toContain("Date of examination");
    expect(text).toMatch(/1\.00 base up/);
    expect(text).toMatch(/Vertex distance\s+Right 12 mm/);
    expect(text).not.toMatch(/Left 12 mm/);
    expect(text).toMatch(/Right: distance 32\.0 mm, near 30\.5 mm/);
    expect(text).toContain("GOC registration no.");
    expect(text).toContain("Signature");
    // Contact-lens cautions only on contact-lens prescriptions.
    expect(text).not.toMatch(/tap water/);
  });

  it("refuses a contact-lens prescription without a fitted lens", async () => {
    const { params, patient } = await signedExam();
    const res = await issue("owner", params, { kind: "contact_lens" });
    expect(statusOf(res)).toBe(409);
    expect(dataOf<{ message: string }>(res).message).toMatch(/issued only from a fitted lens/);
    expect(await db.select().from(prescriptions).where(eq(prescriptions.patientId, patient.id))).toHaveLength(0);
  });

  it("issues a contact-lens prescription only in the fitted lens's steps, with the vertex guide beside it", async () => {
    const { params, patient } = await signedExam(false);
    const [toric] = await db.select().from(contactLenses).where(eq(contactLenses.name, "Aquilo Daily Toric"));
    const fit = await saveFitting(params, {
      left_lens: toric!.id,
      left_bc: "8.60",
      left_dia: "14.5",
      left_power: "-3.75 -0.75 x 180",
      left_rotation: "5",
      left_rotdir: "clockwise",
      left_gr_bulbar: "1.5",
      wearHours: "10",
      care: "none_daily",
    });
    expect(statusOf(fit)).toBe(200);
    expect(statusOf(await saveFitting(params, { intent: "sign", confirmed: "yes" }))).toBe(302);
    const off = await issue("owner", params, {
      kind: "contact_lens",
      left_lens: toric!.id,
      left_bc: "8.60",
      left_dia: "14.5",
      left_power: "-3.75 -0.75 x 175",
    });
    expect(statusOf(off)).toBe(400);
    expect(dataOf<{ errors: Record<string, string[]> }>(off).errors.left_power).toEqual([
      "Left power: axis 175 is not made; Northmere Lens Co. Aquilo Daily Toric comes in 10° steps (nearest 170 or 180).",
    ]);
    const wrongBc = await issue("owner", params, {
      kind: "contact_lens",
      left_lens: toric!.id,
      left_bc: "8.40",
      left_dia: "14.5",
      left_power: "-3.75 -1.00 x 180",
    });
    expect(Object.keys(dataOf<{ errors: Record<string, string[]> }>(wrongBc).errors).sort()).toEqual([
      "left_bc",
      "left_power",
    ]);
    const unfitted = await issue("owner", params, {
      kind: "contact_lens",
      left_lens: toric!.id,
      left_bc: "8.60",
      left_dia: "14.5",
      left_power: "-3.75 -0.75 x 180",
      right_lens: toric!.id,
      right_bc: "8.60",
      right_dia: "14.5",
      right_power: "-5.50",
    });
    expect(dataOf<{ errors: Record<string, string[]> }>(unfitted).errors.right_power?.[0]).toMatch(
      /no lens was fitted/,
    );
    expect(await db.select().from(prescriptions).where(eq(prescriptions.patientId, patient.id))).toHaveLength(0);

    const ok = await issue("owner", params, {
      kind: "contact_lens",
      left_lens: toric!.id,
      left_bc: "8.60",
      left_dia: "14.5",
      left_power: "-3.75 -0.75 x 180",
    });
    expect(statusOf(ok)).toBe(302);
    const [rx] = await db.select().from(prescriptions).where(eq(prescriptions.patientId, patient.id));
    expect(rx!.expiresOn).toBe(addMonths(rx!.issuedAt, 12));
    const eyes = await db.select().from(prescriptionEyes).where(eq(prescriptionEyes.prescriptionId, rx!.id));
    expect(eyes).toHaveLength(1);
    expect(eyes[0]).toMatchObject({
      eye: "left",
      sphere: -3.75,
      cylinder: -0.75,
      axis: 180,
      baseCurveMm: 8.6,
      diameterMm: 14.5,
      contactLensId: toric!.id,
      lensReplacement: "daily",
      spectacleSphere: -4,
    });
    // Guide: −4.00 −1.00 × 180 at 12 mm (none measured for this eye, 12 mm assumed) → −3.817 in the
    // 180 meridian by F/(1 − dF) (effective-power formula, medicalalgorithms.com as in the unit tests).
    expect(eyes[0]!.exactSphere).toBeCloseTo(-4 / 1.048, 3);
    const res = (await run(pdfLoader, makeRequest("/x", { cookie: await cookieFor("owner") }), {
      patientId: patient.id,
      prescriptionId: rx!.id,
    })) as Response;
    const text = pdfText(await res.arrayBuffer());
    expect(text).toContain("Contact-lens prescription");
    // The lens column wraps: its words are read in order across the cell's lines.
    expect(text).toMatch(/Aquilo Daily[\s\S]*Toric/);
    expect(text).toMatch(/Daily[\s\S]*disposable/);
    expect(text).toContain("\u22123.75");
    expect(text).toContain("Guide only, not for ordering");
    expect(text).toMatch(/tap water/);
  });

  it("never gives a patient another patient's prescription, even by guessing ids", async () => {
    const { params, patient } = await signedExam();
    await issue("optometrist", params, { kind: "spectacle", lensUse: "distance" });
    const [rx] = await db.select().from(prescriptions).where(eq(prescriptions.patientId, patient.id));
    const cookie = await cookieFor("patient");
    expect(
      statusOf(await run(pdfLoader, makeRequest("/x", { cookie }), { patientId: patient.id, prescriptionId: rx!.id })),
    ).toBe(404);
    const me = await userByEmail("patient@dioptra-demo.test");
    expect(
      statusOf(
        await run(pdfLoader, makeRequest("/x", { cookie }), { patientId: me.patientId!, prescriptionId: rx!.id }),
      ),
    ).toBe(404);
  });
});
