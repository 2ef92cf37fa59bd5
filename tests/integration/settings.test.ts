import { eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { action as practiceAction, loader as practiceLoader, practiceSchema } from "~/routes/settings/practice";
import { practiceSettings } from "~/db/schema";
import { db } from "~/utils/db.server";
import { cookieFor, dataOf, makeRequest, run, statusOf } from "#tests/support/helpers";

const practiceSchemaShape = practiceSchema.shape;

const valid = {
  name: "Larkspur Lane Eye Care",
  timeZone: "Europe/London",
  currency: "gbp",
  jurisdiction: "uk",
  acuityNotation: "metric",
  spectacleRxValidityMonths: "24",
  contactLensRxValidityMonths: "12",
  portalCancelCutoffHours: "24",
  portalBookingDays: "90",
  staffBookingDays: "730",
};

describe("practice settings", () => {
  it("is the owner's alone", async () => {
    for (const role of ["optometrist", "receptionist", "patient"]) {
      const cookie = await cookieFor(role);
      expect(statusOf(await run(practiceLoader, makeRequest("/settings", { cookie })))).toBe(403);
      expect(
        statusOf(await run(practiceAction, makeRequest("/settings", { cookie, form: { ...valid, name: "Hijacked" } }))),
      ).toBe(403);
    }
    const [row] = await db.select({ name: practiceSettings.name }).from(practiceSettings);
    expect(row?.name).toBe("Larkspur Lane Eye Care");
  });

  it("names each bad field and saves nothing", async () => {
    const cookie = await cookieFor("owner");
    const res = await run(
      practiceAction,
      makeRequest("/settings", {
        cookie,
        form: {
          ...valid,
          jurisdiction: "mars",
          timeZone: "Mars/Olympus",
          currency: "pounds",
          spectacleRxValidityMonths: "0",
          portalCancelCutoffHours: "-3",
          email: "not-an-address",
        },
      }),
    );
    expect(statusOf(res)).toBe(400);
    const errors = dataOf<{ error: Record<string, string[]> }>(res).error;
    expect(Object.keys(errors).sort()).toEqual([
      "currency",
      "email",
      "jurisdiction",
      "portalCancelCutoffHours",
      "spectacleRxValidityMonths",
      "timeZone",
    ]);
    const bad = await run(
      practiceAction,
      makeRequest("/settings", { cookie, form: { ...valid, acuityNotation: "jaeger" } }),
    );
    expect(statusOf(bad)).toBe(400);
    expect(dataOf<{ error: Record<string, string[]> }>(bad).error.acuityNotation?.[0]).toMatch(
      /metric Snellen, feet, decimal or logMAR/,
    );
    expect(errors.jurisdiction?.[0]).toMatch(/Choose where the practice works/);
    expect(errors.timeZone?.[0]).toMatch(/IANA time zone/);
  });

  it("saves valid settings, upper-casing the currency code", async () => {
    // Other test files read these settings at the same time: only values they do not depend on change here.
    const cookie = await cookieFor("owner");
    const [before] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    const current = Object.fromEntries(
      Object.keys(practiceSchemaShape).map((k) => [k, String(before![k as keyof typeof before] ?? "")]),
    );
    const res = await run(practiceAction, makeRequest("/settings", { cookie, form: { ...current, currency: "gbp" } }));
    expect(statusOf(res)).toBe(302);
    const [row] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    expect(row).toMatchObject({
      currency: "GBP",
      jurisdiction: before!.jurisdiction,
      name: before!.name,
      addressLine1: before!.addressLine1,
      portalCancelCutoffHours: before!.portalCancelCutoffHours,
    });
  });

  it("sets the booking horizons within their ranges, naming the field and its range when out of it", async () => {
    const cookie = await cookieFor("owner");
    const [before] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    const current = Object.fromEntries(
      Object.keys(practiceSchemaShape).map((k) => [k, String(before![k as keyof typeof before] ?? "")]),
    );
    const bad = await run(
      practiceAction,
      makeRequest("/settings", { cookie, form: { ...current, portalBookingDays: "0", staffBookingDays: "9999" } }),
    );
    expect(statusOf(bad)).toBe(400);
    const errors = dataOf<{ error: Record<string, string[]> }>(bad).error;
    expect(errors.portalBookingDays?.[0]).toBe("At least 1 day.");
    expect(errors.staffBookingDays?.[0]).toBe("At most 3660 days (ten years).");
    const half = await run(
      practiceAction,
      makeRequest("/settings", { cookie, form: { ...current, portalBookingDays: "30.5" } }),
    );
    expect(dataOf<{ error: Record<string, string[]> }>(half).error.portalBookingDays?.[0]).toBe("Whole days only.");
    const [unchanged] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    expect(unchanged).toMatchObject({
      portalBookingDays: before!.portalBookingDays,
      staffBookingDays: before!.staffBookingDays,
    });

    // Other test files book within the horizons at the same time: widen them, never narrow.
    const portal = Math.max(before!.portalBookingDays, 120);
    const staff = Math.max(before!.staffBookingDays, 800);
    const ok = await run(
      practiceAction,
      makeRequest("/settings", {
        cookie,
        form: { ...current, portalBookingDays: String(portal), staffBookingDays: String(staff) },
      }),
    );
    expect(statusOf(ok)).toBe(302);
    const [row] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    expect(row).toMatchObject({ portalBookingDays: portal, staffBookingDays: staff });
    const page = dataOf<{ values: Record<string, string> }>(
      await run(practiceLoader, makeRequest("/settings", { cookie })),
    );
    expect(page.values).toMatchObject({ portalBookingDays: String(portal), staffBookingDays: String(staff) });
    await db
      .update(practiceSettings)
      .set({ portalBookingDays: before!.portalBookingDays, staffBookingDays: before!.staffBookingDays })
      .where(eq(practiceSettings.id, 1));
  });

  it("refuses hexadecimal, exponents, Infinity and blank text in every number field, naming the field", async () => {
    const cookie = await cookieFor("owner");
    const [before] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    const current = Object.fromEntries(
      Object.keys(practiceSchemaShape).map((k) => [k, String(before![k as keyof typeof before] ?? "")]),
    );
    const fields = [
      "spectacleRxValidityMonths",
      "contactLensRxValidityMonths",
      "portalCancelCutoffHours",
      "portalBookingDays",
      "staffBookingDays",
    ];
    // Number() reads "0x10" as 16, "1e1" as 10 and " " as 0 (ECMAScript StringNumericLiteral); all in range here.
    for (const typed of ["0x10", "1e1", "Infinity", " "]) {
      const res = await run(
        practiceAction,
        makeRequest("/settings", {
          cookie,
          form: { ...current, ...Object.fromEntries(fields.map((f) => [f, typed])) },
        }),
      );
      expect(statusOf(res)).toBe(400);
      const errors = dataOf<{ error: Record<string, string[]> }>(res).error;
      expect(Object.keys(errors).sort()).toEqual([...fields].sort());
      for (const f of fields)
        expect(errors[f]?.[0]).toMatch(
          typed.trim()
            ? new RegExp(`"${typed}" is not a plain decimal number\\. Give a number of`)
            : /^Give a number of/,
        );
    }
    const [after] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    expect(after).toMatchObject(Object.fromEntries(fields.map((f) => [f, before![f as keyof typeof before]])));
  });

  it("keeps the practice's acuity notation, which the exam page then reads bare numbers in", async () => {
    const cookie = await cookieFor("owner");
    const shown = dataOf<{ values: Record<string, string> }>(
      await run(practiceLoader, makeRequest("/settings", { cookie })),
    );
    expect(shown.values.acuityNotation).toBe("metric");
    const [before] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    const current = Object.fromEntries(
      Object.keys(practiceSchemaShape).map((k) => [k, String(before![k as keyof typeof before] ?? "")]),
    );
    // Other test files read the notation: change it, read it back and restore it at once.
    try {
      expect(
        statusOf(
          await run(
            practiceAction,
            makeRequest("/settings", { cookie, form: { ...current, acuityNotation: "logmar" } }),
          ),
        ),
      ).toBe(302);
      const [row] = await db
        .select({ acuityNotation: practiceSettings.acuityNotation })
        .from(practiceSettings)
        .where(eq(practiceSettings.id, 1));
      expect(row?.acuityNotation).toBe("logmar");
    } finally {
      await db
        .update(practiceSettings)
        .set({ acuityNotation: before!.acuityNotation })
        .where(eq(practiceSettings.id, 1));
    }
  });
});
