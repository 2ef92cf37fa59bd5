/**
 * First-load JavaScript of every page, from the production build that `npm test` makes before
 * this run: what a browser downloads before the page is interactive. React Router's client
 * manifest (`assets/manifest-*.js`, `window.__reactRouterManifest`) lists for each route its
 * module and the chunks it imports; a hydrated page's first load is the client entry and its
 * imports plus the module and imports of every route from the root down to the page, each file
 * counted once, gzipped (level 9, as a static host would pre-compress). With lazy route discovery
 * (React Router's default) the manifest file itself is not loaded on a first visit, so it is not
 * counted. A page with a route marked `handle = { hydrate: false }` is sent without scripts
 * (`app/root.tsx`): its first load is 0 kB, and the built server's HTML is checked to say so.
 */
import { existsSync, readdirSync, readFileSync } from "node:fs";
import path from "node:path";
import { gzipSync } from "node:zlib";
import { and, ne } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import { invoices } from "~/db/schema";
import { signPayLink } from "~/models/billing/checkout.server";
import { db } from "~/utils/db.server";
import { clientDir, requestBuiltApp, serverBuild } from "#tests/support/built-app";
import { cookieFor } from "#tests/support/helpers";

type RouteEntry = { id: string; parentId?: string; path?: string; module: string; imports?: string[] };
type ClientManifest = {
  entry: { module: string; imports: string[] };
  routes: Record<string, RouteEntry & { hasDefaultExport: boolean }>;
};

const KB = 1024;

/** Budgets in kB (gzipped) by kind of page. */
const BUDGETS = {
  schedule: 250, // the calendar (FullCalendar) and the other schedule pages
  portal: 110, // the signed-in patient's pages
  signedOut: 125, // sign-in, password and sign-in-link pages, pay by link, unsubscribe, a recipient's referral page
  other: 180,
} as const;
type Kind = keyof typeof BUDGETS;

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

/** Route ids whose module says `handle = { hydrate: false }`, read from the server build. */
async function unhydratedRoutes(): Promise<Set<string>> {
  const build = await serverBuild();
  return new Set(
    Object.values(build.routes)
      .filter((r) => (r?.module.handle as { hydrate?: boolean } | undefined)?.hydrate === false)
      .map((r) => r!.id),
  );
}

export function firstLoadSizes(clientDir: string, unhydrated: Set<string>) {
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
    const hydrated = !chain.some((r) => unhydrated.has(r.id));
    const bytes = hydrated ? [...files].reduce((sum, f) => sum + sizeOf(f), 0) : 0;
    const kind = kindOf(page.id);
    return { id: page.id, kind, hydrated, kB: bytes / KB, budget: BUDGETS[kind] };
  });
}

/** The module scripts and preloads React Router writes into a hydrated page's HTML. */
const SCRIPT_TAGS = /<script[^>]*type="module"|<link[^>]*rel="modulepreload"/g;

// The server build is one large module: load it once, before the tests (within the hook's time limit).
beforeAll(async () => {
  if (existsSync(clientDir)) await serverBuild();
});

describe("first-load JavaScript per page (gzipped) stays within its budget", () => {
  it("the client build exists (npm test builds it before the tests)", () => {
    expect(existsSync(clientDir), `${clientDir} is missing: run react-router build first`).toBe(true);
  });

  it("every page is within its budget", async () => {
    const sizes = firstLoadSizes(clientDir, await unhydratedRoutes()).sort((a, b) => b.kB - a.kB);
    expect(sizes.length).toBeGreaterThan(20);
    console.log(
      [
        "first-load JavaScript, gzipped:",
        ...sizes.map(
          (s) =>
            `  ${s.id.padEnd(40)} ${s.kB.toFixed(1).padStart(6)} kB   budget ${s.budget} kB (${s.kind})` +
            (s.hydrated ? "" : "   not hydrated: no scripts"),
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

  it("every patient portal page and the pay page are sent without scripts", async () => {
    const unhydrated = await unhydratedRoutes();
    for (const id of [
      "routes/portal/home",
      "routes/portal/book",
      "routes/portal/invoices",
      "routes/portal/orders",
      "routes/portal/prescriptions",
      "routes/portal/reminders",
      "routes/pay/pay",
    ])
      expect(unhydrated, id).toContain(id);
  });
});

describe("the built server's HTML carries scripts only for hydrated pages", () => {
  it("a portal page and the pay page have no module script or preload; a staff page and sign-in have them", async () => {
    const patient = await cookieFor("patient");
    const desk = await cookieFor("receptionist");
    const [invoice] = await db
      .select({ id: invoices.id })
      .from(invoices)
      .where(and(ne(invoices.status, "draft"), ne(invoices.status, "void")))
      .limit(1);
    expect(invoice, "the demo practice has an issued invoice").toBeTruthy();
    const html = async (pathname: string, cookie?: string) => {
      const res = await requestBuiltApp(pathname, { headers: cookie ? { cookie } : {} });
      expect(res.status, pathname).toBe(200);
      expect(res.headers.get("content-type"), pathname).toMatch(/^text\/html/);
      return res.text();
    };

    for (const [pathname, cookie, heading] of [
      ["/portal", patient, "Hello,"],
      ["/portal/book", patient, "Book an eye exam"],
      ["/portal/reminders", patient, "Reminders"],
      [`/pay/${signPayLink(invoice!.id)}`, undefined, "Invoice "],
    ] as const) {
      const page = await html(pathname, cookie);
      expect(page, pathname).toContain(heading);
      expect(page.match(SCRIPT_TAGS) ?? [], pathname).toEqual([]);
      expect(page, pathname).not.toContain("__reactRouterContext");
    }
    for (const [pathname, cookie] of [
      ["/schedule/day", desk],
      ["/login", undefined],
    ] as const) {
      const page = await html(pathname, cookie);
      expect((page.match(SCRIPT_TAGS) ?? []).length, pathname).toBeGreaterThan(0);
      expect(page, pathname).toContain("__reactRouterContext");
    }
  });
});
