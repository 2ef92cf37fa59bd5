import { count, eq } from "drizzle-orm";
import { Link, redirect } from "react-router";
import type { Route } from "./+types/home";
import { PageHeader } from "~/components/page-header";
import { TodayCard } from "~/components/schedule/today-card";
import { todaySummary } from "~/models/schedule/today.server";
import { Card } from "~/components/ui/card";
import { patients, practiceSettings, users } from "~/db/schema";
import { homeFor, requireUser } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { navFor, ROLE_LABEL } from "~/utils/nav";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireUser(request);
  if (user.role === "patient") throw redirect(homeFor(user.role));
  const [practice] = await db
    .select({ name: practiceSettings.name, timeZone: practiceSettings.timeZone })
    .from(practiceSettings)
    .limit(1);
  const [patientCount] = await db.select({ n: count() }).from(patients);
  const [staffCount] = await db.select({ n: count() }).from(users).where(eq(users.active, true));
  return {
    user: { name: user.name, role: user.role },
    practice: practice ?? { name: "Your practice", timeZone: "Europe/London" },
    counts: { patients: patientCount?.n ?? 0, accounts: staffCount?.n ?? 0 },
    today: await todaySummary(user),
  };
}

export default function Home({ loaderData }: Route.ComponentProps) {
  const { user, practice, counts, today: diary } = loaderData;
  const today = new Intl.DateTimeFormat("en-GB", { dateStyle: "full", timeZone: practice.timeZone }).format(new Date());
  return (
    <>
      <PageHeader
        title={`Today at ${practice.name}`}
        description={`${today} · signed in as ${ROLE_LABEL[user.role].toLowerCase()}`}
      />
      <TodayCard today={diary} />
      <div className="grid gap-4 md:grid-cols-3">
        <Card title="Patients on record">
          <p className="text-4xl font-bold">{counts.patients.toLocaleString("en-GB")}</p>
        </Card>
        <Card title="Active accounts">
          <p className="text-4xl font-bold">{counts.accounts.toLocaleString("en-GB")}</p>
        </Card>
        <Card title="Go to">
          <ul className="space-y-2">
            {navFor(user.role)
              .filter((i) => i.to !== "/")
              .map((i) => (
                <li key={i.to}>
                  <Link to={i.to} className="font-semibold text-accent-700 underline underline-offset-4">
                    {i.label}
                  </Link>
                </li>
              ))}
          </ul>
        </Card>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Today · Dioptra" }];
