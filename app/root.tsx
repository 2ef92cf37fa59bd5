import { data, Links, Meta, Outlet, Scripts, ScrollRestoration, useMatches, useRouteLoaderData } from "react-router";
import type { Route } from "./+types/root";
import "./app.css";
import { GeneralErrorBoundary } from "./components/error-boundary";
import { ToastViewport } from "./components/toast";
import { publicEnv } from "./utils/env.server";
import { useNonce } from "./components/nonce";
import {
  apiRouteRefusal,
  asProblem,
  bodyRefusal,
  hostAllowed,
  isApiPath,
  problem,
  routePath,
  withSecurityHeaders,
} from "./utils/http.server";
import { crossSiteRefusal } from "./utils/origin.server";
import { inRequestScope } from "./utils/request-scope.server";
import { readToast } from "./utils/toast.server";

export const middleware: Route.MiddlewareFunction[] = [
  async ({ request }, next) => {
    const url = new URL(request.url);
    const api = isApiPath(routePath(url));
    const refuse = (status: number, detail: string) =>
      api
        ? problem(status, detail)
        : new Response(detail, { status, headers: { "content-type": "text/plain; charset=utf-8" } });
    let response: Response;
    if (!hostAllowed(url.host)) {
      response = refuse(421, `This server does not answer for the host name ${url.host}.`);
    } else {
      const crossSite = crossSiteRefusal(request);
      const refusal = crossSite ? { status: 403, detail: crossSite } : null;
      if (refusal) response = refuse(refusal.status, refusal.detail);
      else {
        const bodyProblem = apiRouteRefusal(request) ?? (await bodyRefusal(request));
        if (bodyProblem instanceof Response) response = bodyProblem;
        else if (bodyProblem) response = refuse(bodyProblem.status, bodyProblem.detail);
        else response = await inRequestScope(() => next());
      }
      if (api) response = await asProblem(response);
    }
    // A refusal sent before the body was read: read it anyway, so the client finishes sending
    // and the connection stays usable.
    if (!request.bodyUsed && request.body) await request.arrayBuffer().catch(() => undefined);
    return withSecurityHeaders(response, request);
  },
];

export async function loader({ request }: Route.LoaderArgs) {
  const { toast, setCookie } = await readToast(request);
  return data({ toast, env: publicEnv() }, { headers: setCookie ? { "Set-Cookie": setCookie } : undefined });
}

export const links: Route.LinksFunction = () => [{ rel: "icon", href: "/favicon.svg", type: "image/svg+xml" }];

/**
 * A route that works as plain HTML (its forms post, its links load the next page) says so with
 * `export const handle = { hydrate: false }`: a page with such a route among its matches is sent
 * without React Router's scripts, so the browser loads no JavaScript for it. In a browser that is
 * already running the app (it came from a hydrated page), the same route renders in React as usual.
 */
function useHydrates() {
  const matches = useMatches();
  if (typeof document !== "undefined") return true;
  return !matches.some((m) => (m.handle as { hydrate?: boolean } | undefined)?.hydrate === false);
}

export function Layout({ children }: { children: React.ReactNode }) {
  const root = useRouteLoaderData<typeof loader>("root");
  const nonce = useNonce();
  const hydrates = useHydrates();
  return (
    <html lang="en-GB">
      <head>
        <meta charSet="utf-8" />
        <meta name="viewport" content="width=device-width, initial-scale=1" />
        <Meta />
        <Links />
      </head>
      <body className="min-h-screen">
        <a
          href="#main"
          className="sr-only focus:not-sr-only focus:absolute focus:left-4 focus:top-4 focus:z-50 focus:rounded focus:bg-white focus:px-4 focus:py-2"
        >
          Skip to content
        </a>
        <ToastViewport toast={root?.toast ?? null} dismissible={hydrates} />
        {children}
        {hydrates ? (
          <>
            <ScrollRestoration nonce={nonce} />
            <Scripts nonce={nonce} />
          </>
        ) : null}
      </body>
    </html>
  );
}

export default function App() {
  return <Outlet />;
}

export const meta: Route.MetaFunction = () => [{ title: "Dioptra" }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
