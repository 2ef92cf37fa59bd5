import { asc, desc, eq } from "drizzle-orm";
import { labs, practiceSettings } from "~/db/schema";
import { db } from "~/utils/db.server";
import { notFound } from "~/utils/failure.server";
import { auditedWrite, changePracticeSettings, type Actor } from "./audited.server";

/** The labs orders can go to (in use first), and after how many days an order at a lab is overdue. */
export async function labsPage() {
  const [rows, [p]] = await Promise.all([
    db.select().from(labs).orderBy(desc(labs.active), asc(labs.name)),
    db
      .select({ labOverdueDays: practiceSettings.labOverdueDays })
      .from(practiceSettings)
      .where(eq(practiceSettings.id, 1)),
  ]);
  return {
    labs: rows.map((l) => ({
      id: l.id,
      name: l.name,
      email: l.email,
      phone: l.phone,
      accountRef: l.accountRef,
      active: l.active,
    })),
    labOverdueDays: p?.labOverdueDays ?? 10,
  };
}

export async function addLab(values: { name: string; email: string; phone: string; accountRef: string }, actor: Actor) {
  await auditedWrite(
    { action: "lab.added", entityType: "lab", detail: values },
    actor,
    async (tx) => (await tx.insert(labs).values(values).returning({ id: labs.id }))[0],
  );
}

export async function setLabOverdueDays(days: number, actor: Actor) {
  await changePracticeSettings(
    { labOverdueDays: days },
    "practice.lab_overdue_days_changed",
    { labOverdueDays: days },
    actor,
  );
}

/** Withdraws a lab from new orders, or offers it again; answers its name, 404 when it no longer exists. */
export async function setLabInUse(id: string, intent: "withdraw" | "restore", actor: Actor) {
  const row = await auditedWrite(
    { action: `lab.${intent}`, entityType: "lab", entityId: id },
    actor,
    async (tx) =>
      (
        await tx
          .update(labs)
          .set({ active: intent === "restore" })
          .where(eq(labs.id, id))
          .returning({ id: labs.id, name: labs.name })
      )[0],
  );
  if (!row) notFound("There is no such lab.");
  return row;
}
