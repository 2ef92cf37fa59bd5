import { data, Links, Meta, Outlet, Scripts, ScrollRestoration, useRouteLoaderData } from "react-router";
import type { Route } from "./+types/root";
import "./app.css";
import { GeneralErrorBoundary } from "./components/error-boundary";
import { ToastViewport } from "./components/toast";
import { publicEnv } from "./utils/env.server";
import { crossSiteRefusal } from "./utils/origin.server";
import { readToast } from "./utils/toast.server";

export const middleware: Route.MiddlewareFunction[] = [
  async ({ request }, next) => {
    const refusal = crossSiteRefusal(request);
    if (refusal) return new Response(refusal, { status: 403, headers: { "content-type": "text/plain; charset=utf-8" } });
    return next();
  },
];

export async function loader({ request }: Route.LoaderArgs) {
  const { toast, setCookie } = await readToast(request);
  return data({ toast, env: publicEnv() }, { headers: setCookie ? { "Set-Cookie": setCookie } : undefined });
}

export const links: Route.LinksFunction = () => [{ rel: "icon", href: "/favicon.svg", type: "image/svg+xml" }];

export function Layout({ children }: { children: React.ReactNode }) {
  const root = useRouteLoaderData<typeof loader>("root");
  return (
    <html lang="en-GB">
      <head>
        <meta charSet="utf-8" />
        <meta name="viewport" content="width=device-width, initial-scale=1" />
        <Meta />
        <Links />
      </head>
      <body className="min-h-screen">
        <a href="#main" className="sr-only focus:not-sr-only focus:absolute focus:left-4 focus:top-4 focus:z-50 focus:rounded focus:bg-white focus:px-4 focus:py-2">
          Skip to content
        </a>
        {children}
        <ToastViewport toast={root?.toast ?? null} />
        <ScrollRestoration />
        <Scripts />
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
