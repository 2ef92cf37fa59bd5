import bcrypt from "bcryptjs";
import { and, eq, sql } from "drizzle-orm";
import { drizzle } from "drizzle-orm/node-postgres";
import pg from "pg";
import * as schema from "../app/db/schema";
import { databaseUrl } from "../app/utils/db-url";
import { seedBilling } from "./billing";
import { linkCaseloadVisits, seedCaseload, seedGuardians } from "./caseload";
import { seedCasework } from "./casework";
import { seedClosures } from "./closures";
import { seedContactLenses } from "./contact-lenses";
import { buildDiary } from "./diary";
import { DEMO_PASSWORD, DEMO_PATIENT, DEMO_PRACTICE, DEMO_USERS } from "./demo-practice";
import { seedOrders } from "./orders";
import { seedPortal } from "./portal";
import { seedReferrals } from "./referrals";
import { seedSchedule } from "./schedule";
import { seedSites } from "./sites";

const { patients, practiceSettings, users } = schema;

/** Seeds the demo practice. Idempotent: running it again changes nothing that is already there. */
export async function seed(url = databaseUrl()) {
  const pool = new pg.Pool({ connectionString: url, max: 2 });
  const db = drizzle(pool, { schema, casing: "snake_case" });
  try {
    await db.transaction(async (tx) => {
      await tx
        .insert(practiceSettings)
        .values({ id: 1, ...DEMO_PRACTICE })
        .onConflictDoNothing();
      await seedSites(tx);
      await seedClosures(tx);
      await seedBilling(tx);

      let [patient] = await tx
        .select({ id: patients.id })
        .from(patients)
        .where(
          and(
            eq(patients.lastName, DEMO_PATIENT.lastName),
            eq(patients.firstName, DEMO_PATIENT.firstName),
            eq(patients.dateOfBirth, DEMO_PATIENT.dateOfBirth),
          ),
        )
        .limit(1);
      if (!patient) [patient] = await tx.insert(patients).values(DEMO_PATIENT).returning({ id: patients.id });

      const passwordHash = await bcrypt.hash(DEMO_PASSWORD, 10);
      for (const u of DEMO_USERS) {
        const [existing] = await tx
          .select({ id: users.id })
          .from(users)
          .where(sql`lower(${users.email}) = ${u.email}`)
          .limit(1);
        if (existing) continue;
        await tx.insert(users).values({ ...u, passwordHash, patientId: u.role === "patient" ? patient!.id : null });
      }
      // The catalogue first: the caseload's contact-lens wearers are fitted from it.
      await seedContactLenses(tx);
      await seedCaseload(tx);
      await seedGuardians(tx);
      await seedSchedule(tx);
      await linkCaseloadVisits(tx);
      await seedReferrals(tx);
      await seedPortal(tx);
      await seedOrders(tx);
      await seedCasework(tx);
      // The diary follows the calendar: rebuilt around today on every seeding.
      await buildDiary(tx);
    });
  } finally {
    await pool.end();
  }
}

if (import.meta.url === `file://${process.argv[1]}`) {
  seed()
    .then(() => console.log("[seed] demo practice ready"))
    .catch((error) => {
      console.error("[seed] failed:", error);
      process.exit(1);
    });
}
