/**
 * First-load JavaScript of every page, from the production client build that `npm test` makes
 * before this run: what a browser downloads before the page is interactive. React Router's
 * client manifest (`assets/manifest-*.js`, `window.__reactRouterManifest`) lists for each route
 * its module and the chunks it imports; a page's first load is the client entry and its imports
 * plus the module and imports of every route from the root down to the page, each file counted
 * once, gzipped (level 9, as a static host would pre-compress). With lazy route discovery (React
 * Router's default) the manifest file itself is not loaded on a first visit, so it is not counted.
 */
import { existsSync, readdirSync, readFileSync } from "node:fs";
import path from "node:path";
import { gzipSync } from "node:zlib";
import { describe, expect, it } from "vitest";

type RouteEntry = { id: string; parentId?: string; path?: string; module: string; imports?: string[] };
type ClientManifest = {
  entry: { module: string; imports: string[] };
  routes: Record<string, RouteEntry & { hasDefaultExport: boolean }>;
};

const KB = 1024;

/** Budgets in kB (gzipped) by kind of page. */
const BUDGETS = {
  schedule: 250, // the calendar (FullCalendar) and the other schedule pages
  // The signed-in patient's pages. The goal is 110 kB, but React, React DOM and React Router alone
  // (the client entry and its imports) are 113.2 kB gzipped, so no hydrated page can meet it; the
  // budget holds the portal pages where they are now (116–121 kB) so they cannot grow unnoticed.
  portal: 122,
  signedOut: 125, // sign-in, password and sign-in-link pages, unsubscribe, a recipient's referral page
  other: 180,
} as const;
type Kind = keyof typeof BUDGETS;

/**
 * Pages held to a budget of their own, with the reason. The pay-by-link page is signed out, but
 * shows the invoice's lines in the app's one table component (@tanstack/react-table, 14 kB).
 */
const OWN_BUDGETS: Record<string, number> = { "routes/pay/pay": 135 };

const SIGNED_OUT = new Set([
  "routes/auth/login",
  "routes/auth/forgot-password",
  "routes/auth/reset-password",
  "routes/auth/sign-in-link",
  "routes/auth/sign-in-link-verify",
  "routes/pay/pay",
  "routes/portal/unsubscribe",
  "routes/referrals/reply",
]);

function kindOf(id: string): Kind {
  if (SIGNED_OUT.has(id)) return "signedOut";
  if (id.startsWith("routes/portal/")) return "portal";
  if (id.startsWith("routes/schedule/")) return "schedule";
  return "other";
}

function readManifest(clientDir: string): ClientManifest {
  const assets = path.join(clientDir, "assets");
  const file = readdirSync(assets).find((f) => /^manifest-[\w-]+\.js$/.test(f));
  if (!file) throw new Error(`no client manifest in ${assets}`);
  const text = readFileSync(path.join(assets, file), "utf8").trim();
  const prefix = "window.__reactRouterManifest=";
  if (!text.startsWith(prefix)) throw new Error(`unexpected manifest format in ${file}`);
  return JSON.parse(text.slice(prefix.length).replace(/;$/, "")) as ClientManifest;
}

export function firstLoadSizes(clientDir: string) {
  const manifest = readManifest(clientDir);
  const gz = new Map<string, number>();
  const sizeOf = (url: string) => {
    let n = gz.get(url);
    if (n === undefined) {
      n = gzipSync(readFileSync(path.join(clientDir, url)), { level: 9 }).length;
      gz.set(url, n);
    }
    return n;
  };
  const routes = Object.values(manifest.routes);
  const parents = new Set(routes.map((r) => r.parentId).filter(Boolean));
  // Pages: routes that draw something and are not a layout of other routes.
  const pages = routes.filter((r) => r.hasDefaultExport && !parents.has(r.id));
  return pages.map((page) => {
    const files = new Set([manifest.entry.module, ...manifest.entry.imports]);
    const chain: RouteEntry[] = [];
    for (let r: RouteEntry | undefined = page; r; r = r.parentId ? manifest.routes[r.parentId] : undefined)
      chain.unshift(r);
    for (const r of chain) for (const f of [r.module, ...(r.imports ?? [])]) files.add(f);
    const bytes = [...files].reduce((sum, f) => sum + sizeOf(f), 0);
    const kind = kindOf(page.id);
    return { id: page.id, kind, kB: bytes / KB, budget: OWN_BUDGETS[page.id] ?? BUDGETS[kind] };
  });
}

const clientDir = path.resolve(process.env.DIOPTRA_BUILD_DIR ?? "build", "client");

describe("first-load JavaScript per page (gzipped) stays within its budget", () => {
  it("the client build exists (npm test builds it before the tests)", () => {
    expect(existsSync(clientDir), `${clientDir} is missing: run react-router build first`).toBe(true);
  });

  it("every page is within its budget", () => {
    const sizes = firstLoadSizes(clientDir).sort((a, b) => b.kB - a.kB);
    expect(sizes.length).toBeGreaterThan(20);
    console.log(
      [
        "first-load JavaScript, gzipped:",
        ...sizes.map(
          (s) => `  ${s.id.padEnd(40)} ${s.kB.toFixed(1).padStart(6)} kB   budget ${s.budget} kB (${s.kind})`,
        ),
      ].join("\n"),
    );
    const over = sizes.filter((s) => s.kB > s.budget).map((s) => `${s.id}: ${s.kB.toFixed(1)} kB > ${s.budget} kB`);
    expect(over).toEqual([]);
  });

  it("signed-out pages carry no validation library (the server checks their forms)", () => {
    const manifest = readManifest(clientDir);
    for (const id of SIGNED_OUT) {
      const route = manifest.routes[id]!;
      for (const f of [route.module, ...(route.imports ?? [])]) {
        const code = readFileSync(path.join(clientDir, f), "utf8");
        // zod's own error text and conform's marker, which survive minification.
        expect(code, `${id} loads ${f}`).not.toContain("Invalid input");
        expect(code, `${id} loads ${f}`).not.toMatch(/conform/);
      }
    }
  });
});
