import { inject } from "vitest";
import { UNIT } from "./ports";

// Runs in every test worker before any app module is imported, so env.server.ts and
// db.server.ts see the test database and the test mail stand-in.
// Each worker has its own copy of the database (files on one worker run one after another).
const copies = inject("databaseUrls");
process.env.DATABASE_URL =
  copies[(Number(process.env.VITEST_POOL_ID ?? 1) - 1) % copies.length] ?? inject("databaseUrl");
process.env.SMTP_PORT = String(UNIT.smtp);
process.env.MAILBOX_API_URL = `http://127.0.0.1:${UNIT.mailApi}`;
process.env.APP_URL = "http://127.0.0.1:3000";
process.env.DIOPTRA_DEMO = "1";
process.env.DIOPTRA_PG_POOL = "60";
process.env.STRIPE_API_HOST = "127.0.0.1";
process.env.STRIPE_API_PORT = String(UNIT.stripe);
process.env.STRIPE_API_PROTOCOL = "http";
process.env.TRUST_PROXY = "1";
process.env.S3_ENDPOINT = `http://127.0.0.1:${UNIT.s3}`;
