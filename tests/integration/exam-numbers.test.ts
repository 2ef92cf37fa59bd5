/** Exam number fields take plain decimal numbers only: "0x10" is not 16 mmHg, "1e1" is not 10. */
import { eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { action as examAction } from "~/routes/exams/exam";
import { examIop } from "~/db/schema";
import { db } from "~/utils/db.server";
import { newExam } from "#tests/support/factories";
import { cookieFor, dataOf, makeRequest, run, statusOf } from "#tests/support/helpers";

const save = async (params: { patientId: string; examId: string }, form: Record<string, string>) =>
  run(
    examAction,
    makeRequest(`/patients/${params.patientId}/exams/${params.examId}`, {
      cookie: await cookieFor("optometrist"),
      form: { intent: "save", ...form },
    }),
    params,
  );

describe("exam number fields", () => {
  it.each(["0x10", "1e1", "0b10000", "Infinity", "16e0", "0o20"])(
    "refuses IOP %j with a field error and saves nothing",
    async (typed) => {
      const { exam, params } = await newExam();
      const res = await save(params, {
        section: "iop",
        right_mmHg: typed,
        right_method: "goldmann",
        right_time: "10:00",
      });
      expect(statusOf(res)).toBe(400);
      expect(dataOf<{ errors: Record<string, string[]> }>(res).errors.right_mmHg?.[0]).toMatch(/is not a number/);
      expect(await db.select().from(examIop).where(eq(examIop.examId, exam.id))).toHaveLength(0);
    },
  );

  it("accepts decimal notation, with the minus sign too", async () => {
    const { exam, params } = await newExam();
    expect(
      statusOf(
        await save(params, { section: "iop", right_mmHg: "16.5", right_method: "goldmann", right_time: "10:00" }),
      ),
    ).toBe(200);
    const [row] = await db.select().from(examIop).where(eq(examIop.examId, exam.id));
    expect(row?.mmHg).toBe(16.5);
    const plates = await save(params, {
      section: "colour",
      right_test: "plates_38",
      right_result: "normal",
      right_correct: "1e1",
      right_shown: "0x10",
    });
    expect(statusOf(plates)).toBe(400);
    const errors = dataOf<{ errors: Record<string, string[]> }>(plates).errors;
    expect(errors.right_correct?.[0]).toMatch(/is not a number/);
    expect(errors.right_shown?.[0]).toMatch(/is not a number/);
  });
});
