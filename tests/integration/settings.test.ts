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
  spectacleRxValidityMonths: "24",
  contactLensRxValidityMonths: "12",
  portalCancelCutoffHours: "24",
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
    expect(errors.jurisdiction?.[0]).toMatch(/Choose where the practice works/);
    expect(errors.timeZone?.[0]).toMatch(/IANA time zone/);
  });

  it("saves valid settings, upper-casing the currency code", async () => {
    // This worker's own copy of the database: no other file runs on it meanwhile; the row is put back after.
    const cookie = await cookieFor("owner");
    const [before] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
    const current = Object.fromEntries(
      Object.keys(practiceSchemaShape).map((k) => [k, String(before![k as keyof typeof before] ?? "")]),
    );
    try {
      const res = await run(
        practiceAction,
        makeRequest("/settings", {
          cookie,
          form: { ...current, name: "Larkspur Lane Eye Care (renamed)", currency: "gbp" },
        }),
      );
      expect(statusOf(res)).toBe(302);
      const [row] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
      expect(row).toMatchObject({
        currency: "GBP",
        name: "Larkspur Lane Eye Care (renamed)",
        jurisdiction: before!.jurisdiction,
        addressLine1: before!.addressLine1,
        portalCancelCutoffHours: before!.portalCancelCutoffHours,
      });
    } finally {
      await db.update(practiceSettings).set(before!).where(eq(practiceSettings.id, 1));
    }
  });
});
