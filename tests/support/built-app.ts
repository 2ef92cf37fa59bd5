/**
 * The production build that `npm test` makes before the run (`DIOPTRA_BUILD_DIR`), loaded in the
 * test process: its server build answers requests through React Router's own request handler,
 * exactly as `react-router-serve` would, without a port. Import only from test files (after
 * setup.ts has set the env), as the build's modules read it when they load.
 */
import { existsSync } from "node:fs";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { createRequestHandler, type ServerBuild } from "react-router";
import { BASE } from "./helpers";
import { BUILD_DIR } from "./ports";

export const buildDir = path.resolve(BUILD_DIR);
export const clientDir = path.join(buildDir, "client");
const serverEntry = path.join(buildDir, "server", "index.js");

let build: Promise<ServerBuild> | undefined;
/** The server build's module (routes with their exports, entry, assets manifest). */
export function serverBuild(): Promise<ServerBuild> {
  if (!existsSync(serverEntry)) throw new Error(`${serverEntry} is missing: run react-router build first`);
  build ??= import(/* @vite-ignore */ pathToFileURL(serverEntry).href) as Promise<ServerBuild>;
  return build;
}

/** Requests `pathname` from the built app (a GET unless `init` says otherwise) and returns its response. */
export async function requestBuiltApp(pathname: string, init: RequestInit = {}): Promise<Response> {
  const handler = createRequestHandler(await serverBuild(), "production");
  return handler(new Request(`${BASE}${pathname}`, init));
}
