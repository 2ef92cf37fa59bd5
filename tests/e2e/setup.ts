/**
 * Runs before each browser test file: takes a stack no other running file holds (a session-level
 * advisory lock in the stack's own database, held until the file ends) and points `inject(...)`
 * (`baseUrl`, `e2eDatabaseUrl`, `mailApiPort`, `stripePort`) at it, so every test file, old or
 * new, talks to its own app, database and mailbox without knowing about stacks.
 */
import pg from "pg";
import { afterAll, inject } from "vitest";

const LEASE_KEY = 4_216_001;

async function lease() {
  const stacks = inject("e2eStacks");
  const deadline = Date.now() + 300_000;
  // Vitest runs at most as many browser files at once as there are stacks; a file that has just
  // ended may still be letting go of its lock, so try again for a while before giving up.
  for (;;) {
    for (const stack of stacks) {
      const client = new pg.Client({ connectionString: stack.e2eDatabaseUrl, application_name: "dioptra-e2e-lease" });
      await client.connect();
      const { rows } = await client.query<{ ok: boolean }>("select pg_try_advisory_lock($1) as ok", [LEASE_KEY]);
      if (rows[0]!.ok) return { stack, client };
      await client.end();
    }
    if (Date.now() > deadline) throw new Error(`no free browser test stack among ${stacks.length}`);
    await new Promise((r) => setTimeout(r, 200));
  }
}

const { stack, client } = await lease();

// `inject` reads the worker's provided context; this file's stack replaces the first stack's values.
const state = (globalThis as unknown as { __vitest_worker__: { providedContext: Record<string, unknown> } })
  .__vitest_worker__;
Object.assign(state.providedContext, {
  baseUrl: stack.baseUrl,
  mailApiPort: stack.mailApiPort,
  e2eDatabaseUrl: stack.e2eDatabaseUrl,
  stripePort: stack.stripePort,
  sessionSecret: stack.sessionSecret,
});

afterAll(async () => {
  await client.end().catch(() => undefined);
});
