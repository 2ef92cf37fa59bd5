import { isRouteErrorResponse, Link, useRouteError } from "react-router";
import { Icon } from "./ui/icon";

function messageOf(data: unknown): string | null {
  if (typeof data === "string") return data;
  if (data && typeof data === "object" && "error" in data && typeof (data as { error: unknown }).error === "string") {
    return (data as { error: string }).error;
  }
  return null;
}

/** The friendly error page: 403, 404 and anything else; a stack trace only in development. */
export function GeneralErrorBoundary() {
  const error = useRouteError();
  let status = 500;
  let title = "Something went wrong";
  let text = "The problem has been logged. Try again, and if it keeps happening tell the practice owner.";
  if (isRouteErrorResponse(error)) {
    status = error.status;
    const detail = messageOf(error.data);
    if (status === 403) {
      title = "No access to this page";
      text = detail ?? "Your role does not give access to this page. Ask the practice owner if you need it.";
    } else if (status === 404) {
      title = "Page not found";
      text =
        detail && detail !== "Not found."
          ? detail
          : "There is nothing at this address. It may have been moved, or the link may be mistyped.";
    } else if (status === 401) {
      title = "Please sign in";
      text = detail ?? "Your session has ended.";
    } else {
      title = status >= 500 ? title : "That request could not be completed";
      text = detail ?? text;
    }
  }
  const stack = import.meta.env.DEV && error instanceof Error ? error.stack : null;
  return (
    <main id="main" className="mx-auto max-w-xl px-6 py-16">
      <div className="rounded-lg border border-line bg-white p-8 shadow-sm">
        <p className="flex items-center gap-2 text-sm font-semibold text-muted">
          <Icon name={status === 403 ? "lock" : "alert"} />
          Error {status}
        </p>
        <h1 className="mt-2 text-2xl">{title}</h1>
        <p className="mt-3 text-muted">{text}</p>
        <div className="mt-6 flex gap-3">
          <Link to="/" className="font-semibold text-accent-700 underline underline-offset-4">
            Go to your start page
          </Link>
        </div>
        {stack ? <pre className="mt-6 overflow-auto rounded bg-canvas p-3 text-xs">{stack}</pre> : null}
      </div>
    </main>
  );
}
