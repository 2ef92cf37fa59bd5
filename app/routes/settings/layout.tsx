import { NavLink, Outlet } from "react-router";
import type { Route } from "./+types/layout";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { requireRole } from "~/utils/auth.server";

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  return null;
}

const tabs = [
  { to: "/settings", label: "Practice details", end: true },
  { to: "/settings/users", label: "Team and accounts", end: false },
  { to: "/settings/appointment-types", label: "Appointment types", end: false },
  { to: "/settings/hours", label: "Working hours", end: false },
  { to: "/settings/fees", label: "Fee schedule", end: false },
  { to: "/settings/recipients", label: "Referral recipients", end: false },
];

export default function SettingsLayout() {
  return (
    <div className="grid gap-6 md:grid-cols-[14rem_1fr]">
      <nav aria-label="Settings">
        <ul className="space-y-1">
          {tabs.map((t) => (
            <li key={t.to}>
              <NavLink
                to={t.to}
                end={t.end}
                className={({ isActive }) => `block rounded-md px-3 py-2 text-sm font-semibold ${isActive ? "bg-white text-accent-800 shadow-sm ring-1 ring-line" : "text-muted hover:text-ink"}`}
              >
                {({ isActive }) => (
                  <>
                    {isActive ? <span aria-hidden="true">▸ </span> : null}
                    {t.label}
                  </>
                )}
              </NavLink>
            </li>
          ))}
        </ul>
      </nav>
      <div>
        <Outlet />
      </div>
    </div>
  );
}

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
