import { NavLink } from "react-router";

export type Tab = { to: string; label: string; end?: boolean };

/**
 * The sub-navigation of an area (schedule, billing, settings): one look everywhere. The current
 * page is marked by a pointer and its outline as well as by colour, and announced as current.
 */
export function TabNav({
  label,
  tabs,
  orientation = "horizontal",
  className = "mb-6",
}: {
  label: string;
  tabs: readonly Tab[];
  orientation?: "horizontal" | "vertical";
  className?: string;
}) {
  return (
    <nav aria-label={label} className={className}>
      <ul className={orientation === "vertical" ? "space-y-1" : "flex flex-wrap gap-2 border-b border-line pb-2"}>
        {tabs.map((t) => (
          <li key={t.to}>
            <NavLink
              to={t.to}
              end={t.end ?? false}
              className={({ isActive }) =>
                `block rounded-md px-3 ${orientation === "vertical" ? "py-2" : "py-1.5"} text-sm font-semibold ${isActive ? "bg-white text-accent-800 shadow-sm ring-1 ring-line" : "text-muted hover:text-ink"}`
              }
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
  );
}
