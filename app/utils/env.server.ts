import { z } from "zod";
import { databaseUrl } from "./db-url";

const schema = z.object({
  NODE_ENV: z.enum(["development", "production", "test"]).default("development"),
  DATABASE_URL: z.string().url(),
  /** Comma-separated; the first signs new cookies, all verify (rotation). */
  SESSION_SECRET: z.string().min(16),
  /** Public base URL used in e-mailed links. */
  APP_URL: z.string().url().default("http://127.0.0.1:3000"),
  SMTP_HOST: z.string().default("127.0.0.1"),
  SMTP_PORT: z.coerce.number().int().positive().default(2525),
  SMTP_USER: z.string().optional(),
  SMTP_PASSWORD: z.string().optional(),
  MAIL_FROM: z.string().default("Dioptra <no-reply@dioptra-demo.test>"),
  /** Demo mode: the mailbox page and demo helpers. Never set in production. */
  DIOPTRA_DEMO: z
    .enum(["0", "1"])
    .default("0")
    .transform((v) => v === "1"),
  /** HTTP API of the local mail stand-in, read by /dev/mailbox in demo mode. */
  MAILBOX_API_URL: z.string().url().default("http://127.0.0.1:2526"),
  /** Reverse proxies in front of the app that append the client's address to X-Forwarded-For (0: none, the header is ignored). */
  TRUST_PROXY: z.coerce.number().int().min(0).max(5).default(0),
  /** Stripe: secret key and webhook signing secret. Locally both are the stand-in's test values. */
  STRIPE_SECRET_KEY: z.string().min(8).default("sk_test_dioptra_local_standin"),
  STRIPE_WEBHOOK_SECRET: z.string().min(8).default("whsec_dioptra_local_standin"),
  /** Where the Stripe SDK sends its calls; all three unset in production (real Stripe). */
  STRIPE_API_HOST: z.string().optional(),
  STRIPE_API_PORT: z.coerce.number().int().positive().optional(),
  STRIPE_API_PROTOCOL: z.enum(["http", "https"]).optional(),
});

export type Env = z.infer<typeof schema>;

function load(): Env {
  const parsed = schema.safeParse({
    ...process.env,
    DATABASE_URL: databaseUrl(),
    SESSION_SECRET:
      process.env.SESSION_SECRET ??
      (process.env.NODE_ENV === "production" && process.env.DIOPTRA_DEMO !== "1" ? undefined : "dioptra-local-development-secret"),
  });
  if (!parsed.success) {
    const problems = parsed.error.issues.map((i) => `${i.path.join(".")}: ${i.message}`).join("; ");
    throw new Error(`Invalid environment: ${problems}`);
  }
  return parsed.data;
}

export const env = load();

/** The only values that reach the browser. */
export function publicEnv() {
  return { demo: env.DIOPTRA_DEMO };
}
