/**
 * Every route of app/routes.ts, walked over HTTP against the production build with malformed
 * requests: query strings with NUL characters, impossible and out-of-range dates and huge
 * values; and for every route POST (and PATCH for the API) bodies of the wrong content type,
 * empty, broken JSON, JSON of the wrong types, NUL characters, huge strings, impossible dates and
 * broken multipart. Signed in as the owner, as a patient and signed out, with real record ids in
 * the path where the route takes one and nonsense ids too. No answer may be a 5xx.
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import pg from "pg";
import { afterAll, beforeAll, describe, it } from "vitest";
import { inject } from "vitest";
import routes from "../../app/routes";
import { baseUrl, DEMO, DEMO_PASSWORD } from "./fixtures";

type Entry = { path?: string; file: string; index?: boolean; children?: Entry[] };

/** Every route's full path and module file, layouts left out. */
function flatten(entries: Entry[], prefix = ""): { path: string; file: string }[] {
  const out: { path: string; file: string }[] = [];
  for (const e of entries) {
    const path = e.path ? `${prefix}/${e.path}`.replace(/\/+/g, "/") : prefix;
    if (e.children?.length) out.push(...flatten(e.children, path));
    if (e.index || (e.path !== undefined && !e.children?.length)) out.push({ path: path || "/", file: e.file });
  }
  return out;
}

const ROOT = new URL("../..", import.meta.url).pathname;

/** Field names and intents a route's module (and its .server sibling) mentions. */
function fieldsOf(file: string) {
  const sources = [file, file.replace(/\.tsx?$/, ".server.ts")].flatMap((f) => {
    try {
      return [readFileSync(join(ROOT, "app", f), "utf8")];
    } catch {
      return [];
    }
  });
  const text = sources.join("\n");
  const names = new Set<string>();
  for (const m of text.matchAll(/name="([A-Za-z][\w.[\]-]*)"/g)) names.add(m[1]!);
  for (const m of text.matchAll(/^\s{2,6}([a-z][A-Za-z0-9]*): z\./gm)) names.add(m[1]!);
  const intents = new Set<string>();
  for (const m of text.matchAll(/intent[^\n]{0,60}?["']([a-z][a-z0-9-_]*)["']/g)) intents.add(m[1]!);
  for (const m of text.matchAll(
    /value="([a-z][a-z0-9-_]*)"[^>]*name="intent"|name="intent"[^>]*value="([a-z][a-z0-9-_]*)"/g,
  ))
    intents.add((m[1] ?? m[2])!);
  return { names: [...names].filter((n) => n !== "intent").slice(0, 40), intents: [...intents].slice(0, 12) };
}

const HUGE = "x".repeat(200_000);
const LONG = "y".repeat(5_000);
const BAD_VALUES = ["a\u0000b", LONG, "2026-02-30", "0000-01-01", "0x10"];

function formBody(fields: string[], intent: string | undefined, value: string) {
  const p = new URLSearchParams();
  if (intent) p.set("intent", intent);
  for (const f of fields) p.set(f, value);
  return p.toString();
}

type Sent = { method: string; path: string; what: string; status: number };

let ids: Record<string, string[]> = {};
let cookies: Record<"owner" | "patient" | "none", string> = { owner: "", patient: "", none: "" };

async function cookieFor(email: string) {
  const res = await fetch(`${baseUrl()}/login`, {
    method: "POST",
    body: new URLSearchParams({ email, password: DEMO_PASSWORD }),
    redirect: "manual",
  });
  const set = res.headers.get("set-cookie");
  if (!set) throw new Error(`could not sign in as ${email}: ${res.status}`);
  return set.split(";")[0]!;
}

beforeAll(async () => {
  const client = new pg.Client({ connectionString: inject("e2eDatabaseUrl") });
  await client.connect();
  const first = async (q: string) => (await client.query<{ id: string }>(q)).rows.map((r) => String(r.id));
  ids = {
    patientId: await first("select id from patients order by created_at limit 1"),
    examId: await first("select id from exams order by created_at limit 1"),
    prescriptionId: await first("select id from prescriptions limit 1"),
    documentId: await first("select id from patient_documents limit 1").catch(() => []),
    invoiceId: await first("select id from invoices limit 1"),
    paymentId: await first("select id from payments limit 1"),
    referralId: await first("select id from referrals limit 1"),
    appointmentId: await first("select id from appointments limit 1"),
    batchId: await first("select id from recall_batches limit 1").catch(() => []),
  };
  await client.end();
  cookies = { owner: await cookieFor(DEMO.owner), patient: await cookieFor(DEMO.patient), none: "" };
});

const sent: Sent[] = [];
afterAll(() => {
  const fives = sent.filter((s) => s.status >= 500);
  console.log(`malformed requests sent: ${sent.length}; answered 5xx: ${fives.length}`);
});

/** The route's path with each parameter filled in from `pick`. */
function fill(path: string, pick: (param: string) => string) {
  return path.replace(/:(\w+)\??/g, (_, name: string) => encodeURIComponent(pick(name))).replace(/\*$/, "no-such-page");
}

function variantsFor(path: string): string[] {
  const params = [...path.matchAll(/:(\w+)/g)].map((m) => m[1]!);
  if (!params.length) return [path.replace(/\*$/, "no-such-page")];
  const real = fill(path, (p) => ids[p]?.[0] ?? "00000000-0000-4000-8000-000000000000");
  const nonsense = fill(path, (p) =>
    p === "variant" ? "thumb" : p === "index" ? "-1" : p === "token" ? "AAAA.BBBB-+=%20!" : "not-an-id\u0000",
  );
  const missing = fill(path, (p) =>
    p === "variant" ? "original" : p === "index" ? "99" : "00000000-0000-4000-8000-000000000000",
  );
  return [...new Set([real, nonsense, missing])];
}

/** One kind of damage per query, so an early refusal of one does not hide another. */
const QUERIES = [
  "?q=%00",
  "?day=2026-02-30&date=2026-02-30",
  "?day=0000-01-01&date=0000-01-01&month=0000-01",
  "?start=0000-01-01&end=0000-01-02",
  "?start=2026-02-30&end=9999-12-31T25:61",
  "?month=2026-13&from=2026-13-01&to=1e309&week=2026-W99",
  "?page=-1&size=0x10&sort=%27&type=%27&provider=not-a-uuid",
  `?q=${"z".repeat(1500)}`,
  "?token=AAAA&redirectTo=%09//evil.example",
];

async function send(log: Sent[], method: string, path: string, what: string, init: RequestInit & { cookie: string }) {
  const headers = new Headers(init.headers);
  if (init.cookie) headers.set("cookie", init.cookie);
  let status: number;
  try {
    const res = await fetch(`${baseUrl()}${path}`, { ...init, method, headers, redirect: "manual" });
    await res.arrayBuffer();
    status = res.status;
  } catch (error) {
    status = 599;
    what += ` (${(error as Error).message})`;
  }
  log.push({ method, path, what, status });
  sent.push({ method, path, what, status });
  return status;
}

const all = flatten(routes as unknown as Entry[]);

// Routes are walked five at a time (Vitest's maxConcurrency; each route's own requests stay in
// order): the server answers one route's request while the database works on another's.
describe.concurrent("malformed requests to every route", () => {
  it("enumerates the routes of app/routes.ts", ({ expect }) => {
    expect(all.length).toBeGreaterThan(60);
    expect(all.some((r) => r.path === "/api/appointments")).toBe(true);
  });

  for (const route of all) {
    it(`${route.path} answers malformed requests with 4xx, never 5xx`, { timeout: 180_000 }, async ({ expect }) => {
      const { names, intents } = fieldsOf(route.file);
      const fields = [
        ...new Set([...names, "email", "password", "q", "date", "day", "start", "end", "notes", "name", "amount"]),
      ];
      const isApi = route.path.startsWith("/api/");
      const mine: Sent[] = [];
      // Sign-out would end the walk's own sessions: it is walked signed out.
      const roles = route.path === "/logout" ? (["none"] as const) : (["owner", "patient", "none"] as const);
      for (const path of variantsFor(route.path)) {
        for (const role of roles) {
          const cookie = cookies[role];
          for (const q of QUERIES) await send(mine, "GET", `${path}${q}`, `query ${q.slice(0, 40)}`, { cookie });
          const post = (what: string, body: BodyInit | null, type?: string, method = "POST") =>
            send(mine, method, path, what, { cookie, body, headers: type ? { "content-type": type } : {} });
          await post("no body", null);
          await post("empty form", "", "application/x-www-form-urlencoded");
          await post("text/plain", "hello", "text/plain");
          await post("broken JSON", "{", "application/json");
          await post("JSON array", "[]", "application/json");
          await post(
            "JSON of wrong types",
            JSON.stringify(Object.fromEntries(fields.map((f, i) => [f, [i, { nested: null }, true][i % 3]]))),
            "application/json",
          );
          await post(
            "JSON with NUL",
            JSON.stringify(Object.fromEntries(fields.map((f) => [f, "a\u0000b"]))),
            "application/json",
          );
          await post(
            "JSON impossible dates",
            JSON.stringify({
              ...Object.fromEntries(fields.map((f) => [f, "2026-02-30"])),
              start: "0000-01-01",
              end: "9999-12-31",
            }),
            "application/json",
          );
          await post("huge form", formBody(fields.slice(0, 3), intents[0], HUGE), "application/x-www-form-urlencoded");
          await post(
            "broken multipart",
            '--x\r\nContent-Disposition: form-data; name="a"\r\n\r\nb',
            "multipart/form-data; boundary=zz",
          );
          if (isApi)
            await post(
              "PATCH JSON of wrong types",
              JSON.stringify({ start: 5, status: ["x"], providerId: {} }),
              "application/json",
              "PATCH",
            );
          if (role === "none" || path !== variantsFor(route.path)[0]) continue;
          for (const intent of intents.length ? intents : [undefined]) {
            for (const value of BAD_VALUES)
              await post(
                `form ${intent ?? ""} ${JSON.stringify(value.slice(0, 12))}`,
                formBody(fields, intent, value),
                "application/x-www-form-urlencoded",
              );
          }
        }
      }
      const fives = mine
        .filter((s) => s.status >= 500)
        .map((s) => `${s.status} ${s.method} ${s.path.slice(0, 80)} — ${s.what}`);
      expect(fives.join("\n")).toBe("");
    });
  }
});
