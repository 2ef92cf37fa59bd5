/**
 * The demo practice's diary: appointment types, the providers' working hours, a few more
 * fictional patients, past visits (so the recall list has people due) and this week's bookings.
 * Idempotent: each part is added only when it is missing.
 */
import { isBankHoliday } from "./closures";
import { and, eq, inArray, sql } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";
import { addDays, localParts, wallTimeToInstant } from "../app/lib/scheduling/time";
import { addMonths } from "../app/lib/scheduling/recall";

const {
  appointmentTypes,
  appointments,
  appointmentStatusChanges,
  feeItems,
  patients,
  practiceSettings,
  providerBreaks,
  rooms,
  sites,
  users,
  workingHours,
} = schema;
type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];

export const DEMO_TYPES = [
  {
    name: "Comprehensive eye exam",
    durationMinutes: 30,
    fee: "EXAM-A",
    recallMonths: null,
    routineExam: true,
    performerRoles: ["owner", "optometrist"],
  },
  {
    name: "Child eye exam",
    durationMinutes: 30,
    fee: "EXAM-C",
    recallMonths: 12,
    routineExam: true,
    performerRoles: ["owner", "optometrist"],
  },
  {
    name: "Contact lens check",
    durationMinutes: 20,
    fee: "CL-CHK",
    recallMonths: 12,
    routineExam: true,
    performerRoles: ["owner", "optometrist"],
  },
  {
    name: "Contact lens fitting",
    durationMinutes: 45,
    fee: "CL-FIT",
    recallMonths: null,
    routineExam: false,
    performerRoles: ["owner", "optometrist"],
  },
  {
    name: "Spectacle collection",
    durationMinutes: 15,
    fee: null,
    recallMonths: null,
    routineExam: false,
    performerRoles: ["owner", "optometrist", "receptionist"],
  },
] as const;

export const DEMO_SCHEDULE_PATIENTS = [
  {
    firstName: "Osric",
    lastName: "Pellinore",
    dateOfBirth: "1962-11-03",
    sex: "male" as const,
    email: "osric.pellinore@dioptra-demo.test",
    phone: "07700 900 418",
  },
  {
    firstName: "Marisol",
    lastName: "Quenby",
    dateOfBirth: "1988-02-29",
    sex: "female" as const,
    email: "marisol.quenby@dioptra-demo.test",
    phone: "07700 900 527",
  },
  {
    firstName: "Tamsin",
    lastName: "Hollowell",
    dateOfBirth: "2016-07-21",
    sex: "female" as const,
    email: "hollowell.family@dioptra-demo.test",
    phone: "07700 900 633",
  },
  {
    firstName: "Emeric",
    lastName: "Vantongeren",
    dateOfBirth: "1975-09-12",
    sex: "male" as const,
    email: "emeric.v@dioptra-demo.test",
    phone: "07700 900 741",
    remindersByEmail: false,
    recallsByEmail: false,
  },
  {
    firstName: "Ngozi",
    lastName: "Farrowdale",
    dateOfBirth: "1993-05-06",
    sex: "female" as const,
    email: "ngozi.farrowdale@dioptra-demo.test",
    phone: "07700 900 852",
  },
  {
    firstName: "Caspian",
    lastName: "Thornbury",
    dateOfBirth: "2012-01-30",
    sex: "male" as const,
    email: null,
    phone: "07700 900 963",
  },
];

const SEED_NOTE = "demo diary";

export async function seedSchedule(tx: Tx) {
  const [settings] = await tx
    .select({ timeZone: practiceSettings.timeZone })
    .from(practiceSettings)
    .where(eq(practiceSettings.id, 1));
  const timeZone = settings?.timeZone ?? "Europe/London";

  // Appointment types, linked to the demo fee schedule by code.
  const [{ n: typeCount } = { n: 0 }] = await tx.select({ n: sql<number>`count(*)::int` }).from(appointmentTypes);
  if (typeCount === 0) {
    const fees = await tx.select({ id: feeItems.id, code: feeItems.code }).from(feeItems);
    await tx.insert(appointmentTypes).values(
      DEMO_TYPES.map((t) => ({
        name: t.name,
        durationMinutes: t.durationMinutes,
        defaultFeeItemId: fees.find((f) => f.code === t.fee)?.id ?? null,
        recallMonths: t.recallMonths,
        routineExam: t.routineExam,
        performerRoles: [...t.performerRoles],
      })),
    );
  }

  // Working hours: Monday to Friday 09:00–17:30 with lunch 13:00–14:00; the optometrist also
  // Saturday mornings. The owner is in Room 1, the optometrist in Room 2, except on Thursdays when
  // the optometrist works at the part-time Hillcrest Parade site.
  const providers = await tx
    .select({ id: users.id, role: users.role, email: users.email })
    .from(users)
    .where(inArray(users.role, ["owner", "optometrist"]));
  const allSites = await tx.select().from(sites);
  const allRooms = await tx.select().from(rooms);
  const main = allSites.find((s) => s.isDefault)!;
  const second = allSites.find((s) => !s.isDefault);
  const room = (siteId: string, name: string) =>
    allRooms.find((r) => r.siteId === siteId && r.name === name)?.id ?? null;
  for (const p of providers) {
    const [has] = await tx
      .select({ id: workingHours.id })
      .from(workingHours)
      .where(eq(workingHours.providerId, p.id))
      .limit(1);
    if (has) continue;
    const days = p.role === "optometrist" ? [1, 2, 3, 4, 5, 6] : [1, 2, 3, 4, 5];
    const where = (weekday: number) =>
      p.role === "optometrist" && weekday === 4 && second
        ? { siteId: second.id, roomId: room(second.id, "Consulting room") }
        : { siteId: main.id, roomId: room(main.id, p.role === "owner" ? "Room 1" : "Room 2") };
    await tx.insert(workingHours).values(
      days.map((weekday) => ({
        providerId: p.id,
        weekday,
        startMinute: 9 * 60,
        endMinute: weekday === 6 ? 13 * 60 : 17 * 60 + 30,
        ...where(weekday),
      })),
    );
    await tx.insert(providerBreaks).values(
      days
        .filter((d) => d <= 5)
        .map((weekday) => ({
          providerId: p.id,
          weekday,
          startMinute: 13 * 60,
          endMinute: 14 * 60,
          label: "Lunch",
          siteId: where(weekday).siteId,
        })),
    );
  }

  // More fictional patients.
  const ids: string[] = [];
  for (const p of DEMO_SCHEDULE_PATIENTS) {
    let [row] = await tx
      .select({ id: patients.id })
      .from(patients)
      .where(
        and(
          eq(patients.firstName, p.firstName),
          eq(patients.lastName, p.lastName),
          eq(patients.dateOfBirth, p.dateOfBirth),
        ),
      )
      .limit(1);
    if (!row)
      [row] = await tx
        .insert(patients)
        .values({ ...p, city: "Brackenford" })
        .returning({ id: patients.id });
    ids.push(row!.id);
  }

  const [{ n: seeded } = { n: 0 }] = await tx
    .select({ n: sql<number>`count(*)::int` })
    .from(appointments)
    .where(eq(appointments.notes, SEED_NOTE));
  const optometrist = providers.find((p) => p.role === "optometrist");
  const owner = providers.find((p) => p.role === "owner");
  if (seeded > 0 || !optometrist || !owner) return;
  const types = await tx
    .select({ id: appointmentTypes.id, name: appointmentTypes.name, durationMinutes: appointmentTypes.durationMinutes })
    .from(appointmentTypes);
  const type = (name: string) => types.find((t) => t.name === name)!;
  const [demoPatient] = await tx
    .select({ id: patients.id })
    .from(patients)
    .where(eq(patients.email, "patient@dioptra-demo.test"))
    .limit(1);
  const today = localParts(new Date(), timeZone).date;

  type Plan = {
    patientId: string;
    providerId: string;
    typeName: string;
    date: string;
    minute: number;
    status: "completed" | "booked" | "confirmed";
  };
  const plans: Plan[] = [];
  // Past routine exams, so that some patients are due (or overdue) for recall now.
  const past = (months: number, minute: number) => addMonths(today, -months) + "|" + minute;
  const pastVisits: [number, string, number, string][] = [
    [0, "Comprehensive eye exam", 25, "owner"],
    [1, "Comprehensive eye exam", 24, "optometrist"],
    [2, "Child eye exam", 12, "optometrist"],
    [3, "Comprehensive eye exam", 26, "optometrist"],
    [4, "Contact lens check", 11, "optometrist"],
    [5, "Child eye exam", 13, "owner"],
  ];
  pastVisits.forEach(([i, typeName, months, who], k) => {
    const [date, minute] = past(months, 9 * 60 + 30 * k).split("|");
    plans.push({
      patientId: ids[i]!,
      providerId: who === "owner" ? owner.id : optometrist.id,
      typeName,
      date: date!,
      minute: Number(minute),
      status: "completed",
    });
  });
  if (demoPatient) {
    const [date] = past(23, 0).split("|");
    plans.push({
      patientId: demoPatient.id,
      providerId: optometrist.id,
      typeName: "Comprehensive eye exam",
      date: date!,
      minute: 11 * 60,
      status: "completed",
    });
  }
  // This week's diary: the next working days.
  let day = today;
  const upcoming: [number | "demo", string, number, "booked" | "confirmed"][] = [
    ["demo", "Comprehensive eye exam", 10 * 60, "confirmed"],
    [4, "Contact lens check", 11 * 60, "booked"],
    [1, "Spectacle collection", 15 * 60, "booked"],
  ];
  for (const [i, typeName, minute, status] of upcoming) {
    day = addDays(day, 1);
    while ([6, 7].includes(((new Date(`${day}T12:00:00Z`).getUTCDay() + 6) % 7) + 1) || isBankHoliday(day))
      day = addDays(day, 1);
    const patientId = i === "demo" ? demoPatient?.id : ids[i];
    if (patientId) plans.push({ patientId, providerId: optometrist.id, typeName, date: day, minute, status });
  }

  const hours = await tx.select().from(workingHours);
  for (const p of plans) {
    const t = type(p.typeName);
    const start = wallTimeToInstant(p.date, p.minute, timeZone);
    if (!t || !start) continue;
    // At the site and in the room where the provider works that weekday.
    const day = hours.find((h) => h.providerId === p.providerId && h.weekday === localParts(start, timeZone).weekday);
    const [row] = await tx
      .insert(appointments)
      .values({
        patientId: p.patientId,
        providerId: p.providerId,
        appointmentTypeId: t.id,
        siteId: day?.siteId,
        roomId: day?.roomId ?? null,
        startsAt: start,
        endsAt: new Date(start.getTime() + t.durationMinutes * 60_000),
        status: p.status,
        notes: SEED_NOTE,
        statusChangedAt: start,
      })
      .returning({ id: appointments.id });
    await tx.insert(appointmentStatusChanges).values({ appointmentId: row!.id, toStatus: p.status, changedAt: start });
  }
}
