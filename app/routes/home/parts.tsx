import type { ReactNode } from "react";
import { Link } from "react-router";
import { Card } from "~/components/ui/card";
import { Icon } from "~/components/ui/icon";

export const linkClass = "font-semibold text-accent-700 underline underline-offset-4";

/**
 * One item of a home page: its title with the count in words, a few rows, what it means when
 * there are none (said in words), and the way to the page where the whole list is acted on.
 */
export function HomeList<T>({
  id,
  title,
  total,
  rows,
  empty,
  more,
  children,
}: {
  id: string;
  title: string;
  total: number;
  rows: T[];
  empty: string;
  /** Where the whole list is acted on. */
  more: { to: string; label: string };
  children: (row: T) => ReactNode;
}) {
  return (
    <Card
      title={
        <span id={`${id}-title`}>
          {title} <span className="text-base font-normal text-muted">({total.toLocaleString("en-GB")})</span>
        </span>
      }
      actions={
        <Link to={more.to} className={`${linkClass} text-sm`}>
          {more.label}
        </Link>
      }
    >
      <div data-testid={id}>
        {rows.length === 0 ? (
          <p className="flex items-center gap-2 text-muted">
            <Icon name="info" className="size-4" /> {empty}
          </p>
        ) : (
          <ul className="divide-y divide-line" aria-labelledby={`${id}-title`}>
            {rows.map((r, i) => (
              <li key={i} className="flex flex-wrap items-center gap-x-3 gap-y-1 py-2 text-sm">
                {children(r)}
              </li>
            ))}
          </ul>
        )}
        {total > rows.length ? (
          <p className="mt-2 text-sm text-muted">
            and {(total - rows.length).toLocaleString("en-GB")} more, all on the page linked above.
          </p>
        ) : null}
      </div>
    </Card>
  );
}

/** A figure of the owner's page: the value, what it counts, and where it comes from. */
export function Figure({
  id,
  title,
  value,
  detail,
  link,
}: {
  id: string;
  title: string;
  value: string;
  detail: ReactNode;
  link: { to: string; label: string };
}) {
  return (
    <Card title={title}>
      <div data-testid={id}>
        <p className="text-3xl font-bold tabular-nums">{value}</p>
        <p className="mt-1 text-sm text-muted">{detail}</p>
        <p className="mt-3 text-sm">
          <Link to={link.to} className={linkClass}>
            {link.label}
          </Link>
        </p>
      </div>
    </Card>
  );
}
