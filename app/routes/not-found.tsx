import { data } from "react-router";
import type { Route } from "./+types/not-found";
import { GeneralErrorBoundary } from "~/components/error-boundary";

export async function loader(_: Route.LoaderArgs) {
  throw data({ error: "Not found." }, { status: 404 });
}

export default function NotFound() {
  return null;
}

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
