import { Form, NavLink, Outlet } from "react-router";
import type { Route } from "./+types/layout";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { Icon } from "~/components/ui/icon";
import { requireUser } from "~/utils/auth.server";
import { navFor, ROLE_LABEL } from "~/utils/nav";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireUser(request);
  return { user: { name: user.name, email: user.email, role: user.role } };
}

function Shell({
  user,
  children,
}: {
  user: { name: string; email: string; role: keyof typeof ROLE_LABEL } | null;
  children: React.ReactNode;
}) {
  return (
    <div className="min-h-screen">
      <header className="border-b border-line bg-white">
        <div className="mx-auto flex max-w-7xl flex-wrap items-center gap-x-6 gap-y-2 px-4 py-3 sm:px-6">
          <NavLink to="/" className="flex items-center gap-2 text-lg font-bold text-accent-800">
            <img src="/favicon.svg" alt="" className="size-7" /> Dioptra
          </NavLink>
          {user ? (
            <nav aria-label="Main" className="order-3 w-full sm:order-none sm:w-auto sm:flex-1">
              <ul className="flex flex-wrap gap-1">
                {navFor(user.role).map((item) => (
                  <li key={item.to}>
                    <NavLink
                      to={item.to}
                      end={item.to === "/" || item.to === "/portal"}
                      className={({ isActive }) =>
                        `block rounded-md px-3 py-2 text-sm font-semibold ${isActive ? "bg-accent-50 text-accent-800 underline decoration-2 underline-offset-[6px]" : "text-muted hover:bg-canvas hover:text-ink"}`
                      }
                    >
                      {item.label}
                    </NavLink>
                  </li>
                ))}
              </ul>
            </nav>
          ) : null}
          {user ? (
            <details className="relative ml-auto">
              <summary className="flex cursor-pointer list-none items-center gap-2 rounded-md border border-line px-3 py-1.5 text-sm">
                <Icon name="user" />
                <span className="font-semibold">{user.name}</span>
                <span className="hidden text-muted sm:inline">· {ROLE_LABEL[user.role]}</span>
                <Icon name="chevron" />
              </summary>
              <div className="absolute right-0 z-30 mt-2 w-64 rounded-md border border-line bg-white p-2 shadow-lg">
                <p className="px-3 py-2 text-sm text-muted">
                  Signed in as <span className="font-semibold text-ink">{user.email}</span>
                </p>
                <NavLink to="/account" className="block rounded px-3 py-2 text-sm hover:bg-canvas">
                  Account and sessions
                </NavLink>
                <Form method="post" action="/logout">
                  <button type="submit" className="block w-full rounded px-3 py-2 text-left text-sm hover:bg-canvas">
                    Sign out
                  </button>
                </Form>
              </div>
            </details>
          ) : null}
        </div>
      </header>
      {children}
    </div>
  );
}

export default function AppLayout({ loaderData }: Route.ComponentProps) {
  return (
    <Shell user={loaderData.user}>
      <main id="main" className="mx-auto max-w-7xl px-4 py-8 sm:px-6">
        <Outlet />
      </main>
    </Shell>
  );
}

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
