import { Outlet } from "react-router";
import type { Route } from "./+types/layout";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { TabNav } from "~/components/tab-nav";
import { requireRole } from "~/utils/auth.server";

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  return null;
}

const tabs = [
  { to: "/settings", label: "Practice details", end: true },
  { to: "/settings/users", label: "Team and accounts", end: false },
  { to: "/settings/appointment-types", label: "Appointment types", end: false },
  { to: "/settings/sites", label: "Sites and rooms", end: false },
  { to: "/settings/closures", label: "Opening and closures", end: false },
  { to: "/settings/hours", label: "Working hours", end: false },
  { to: "/settings/fees", label: "Fee schedule", end: false },
  { to: "/settings/recipients", label: "Referral recipients", end: false },
  { to: "/settings/frames", label: "Frames", end: false },
  { to: "/settings/contact-lenses", label: "Contact lenses", end: false },
  { to: "/settings/labs", label: "Labs", end: false },
];

export default function SettingsLayout() {
  return (
    <div className="grid gap-6 md:grid-cols-[14rem_1fr]">
      <TabNav label="Settings" tabs={tabs} orientation="vertical" className="" />
      <div>
        <Outlet />
      </div>
    </div>
  );
}

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
