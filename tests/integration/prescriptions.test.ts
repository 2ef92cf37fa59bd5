import { execFileSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { action as examAction } from "~/routes/exams/exam";
import { loader as pdfLoader } from "~/routes/patients/prescription-pdf";
import { addMonths, contactLensPower } from "~/models/prescriptions/prescriptions.server";
import { prescriptionEyes, prescriptions } from "~/db/schema";
import { db } from "~/utils/db.server";
import { newExam } from "#tests/support/factories";
import { cookieFor, makeRequest, run, statusOf, userByEmail } from "#tests/support/helpers";

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
    expect(statusOf(await issue("optometrist", unsigned.params, { kind: "spectacle" }))).toBe(409);
    const signed = await signedExam();
    expect(statusOf(await issue("receptionist", signed.params, { kind: "spectacle" }))).toBe(403);
    expect(statusOf(await issue("optometrist", signed.params, { kind: "bifocal-goggles" }))).toBe(400);
    expect(await db.select().from(prescriptions).where(eq(prescriptions.patientId, signed.patient.id))).toHaveLength(0);
  });

  it("issues a spectacle prescription with the practice's validity and a PDF the front desk can print", async () => {
    const { params, patient } = await signedExam();
    expect(statusOf(await issue("optometrist", params, { kind: "spectacle", notes: "Anti-reflection coating" }))).toBe(
      302,
    );
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
      vertexMm: 12,
    });

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
  });

  it("issues a contact-lens prescription showing the rounded and the exact corneal-plane powers", async () => {
    const { params, patient } = await signedExam();
    expect(
      statusOf(
        await issue("owner", params, {
          kind: "contact_lens",
          lensName: "Monthly silicone hydrogel",
          baseCurveMm: "8.6",
          diameterMm: "14.2",
        }),
      ),
    ).toBe(302);
    const [rx] = await db.select().from(prescriptions).where(eq(prescriptions.patientId, patient.id));
    expect(rx!.expiresOn).toBe(addMonths(rx!.issuedAt, 12));
    const eyes = await db.select().from(prescriptionEyes).where(eq(prescriptionEyes.prescriptionId, rx!.id));
    expect(eyes.find((e) => e.eye === "right")).toMatchObject({
      sphere: -5.5,
      spectacleSphere: -6,
      baseCurveMm: 8.6,
      diameterMm: 14.2,
    });
    expect(eyes.find((e) => e.eye === "right")!.exactSphere).toBeCloseTo(-5.597, 3);
    const res = (await run(pdfLoader, makeRequest("/x", { cookie: await cookieFor("owner") }), {
      patientId: patient.id,
      prescriptionId: rx!.id,
    })) as Response;
    const text = pdfText(await res.arrayBuffer());
    expect(text).toContain("Contact-lens prescription");
    expect(text).toContain("\u22125.50");
    expect(text).toContain("\u22125.597");
    expect(text).toContain("Monthly silicone hydrogel");
  });

  it("never gives a patient another patient's prescription, even by guessing ids", async () => {
    const { params, patient } = await signedExam();
    await issue("optometrist", params, { kind: "spectacle" });
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
