import { TabNav } from "~/components/tab-nav";

const links = [
  { to: "/schedule", label: "Calendar", end: true },
  { to: "/schedule/day", label: "Day list" },
  { to: "/schedule/recalls", label: "Recalls" },
  { to: "/schedule/messages", label: "E-mail log" },
];

/** Tabs between the schedule's pages. */
export function ScheduleNav() {
  return <TabNav label="Schedule" tabs={links} />;
}
