import { NavLink } from "react-router";

const links = [
  { to: "/schedule", label: "Calendar", end: true },
  { to: "/schedule/day", label: "Day list", end: false },
  { to: "/schedule/recalls", label: "Recalls", end: false },
  { to: "/schedule/messages", label: "E-mail log", end: false },
];

/** Tabs between the schedule's pages. */
export function ScheduleNav() {
  return (
    <nav aria-label="Schedule" className="mb-6">
      <ul className="flex flex-wrap gap-2 border-b border-line pb-2">
        {links.map((l) => (
          <li key={l.to}>
            <NavLink
              to={l.to}
              end={l.end}
              className={({ isActive }) => `block rounded-md px-3 py-1.5 text-sm font-semibold ${isActive ? "bg-white text-accent-800 shadow-sm ring-1 ring-line" : "text-muted hover:text-ink"}`}
            >
              {({ isActive }) => (
                <>
                  {isActive ? <span aria-hidden="true">▸ </span> : null}
                  {l.label}
                </>
              )}
            </NavLink>
          </li>
        ))}
      </ul>
    </nav>
  );
}
