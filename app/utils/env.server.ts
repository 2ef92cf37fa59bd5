import { z } from "zod";
import { databaseUrl } from "./db-url";

const schema = z
  .object({
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
    /**
     * Object storage (S3 API) for kept files. Locally: the s3rver stand-in and its default keys.
     * In production: the provider's endpoint (unset for AWS), bucket, region and credentials (unset
     * keys: the SDK's default chain, e.g. an instance role).
     */
    S3_ENDPOINT: z.string().url().optional(),
    S3_REGION: z.string().min(1),
    S3_BUCKET: z
      .string()
      .regex(/^[a-z0-9][a-z0-9.-]{1,61}[a-z0-9]$/, "a bucket name: 3-63 lower-case letters, digits, dots and dashes"),
    S3_ACCESS_KEY_ID: z.string().min(1).optional(),
    S3_SECRET_ACCESS_KEY: z.string().min(1).optional(),
    S3_FORCE_PATH_STYLE: z
      .enum(["0", "1", "true", "false"])
      .default("0")
      .transform((v) => v === "1" || v === "true"),
    /** The practice's namespace in the bucket: every key starts with it. */
    DIOPTRA_PRACTICE_ID: z
      .string()
      .regex(/^[a-z0-9][a-z0-9-]{0,62}$/, "lower-case letters, digits and dashes")
      .default("practice"),
  })
  .superRefine((v, ctx) => {
    if (Boolean(v.S3_ACCESS_KEY_ID) !== Boolean(v.S3_SECRET_ACCESS_KEY))
      ctx.addIssue({
        code: "custom",
        path: ["S3_SECRET_ACCESS_KEY"],
        message: "set both S3_ACCESS_KEY_ID and S3_SECRET_ACCESS_KEY, or neither",
      });
  });

export type Env = z.infer<typeof schema>;

/** The local S3 stand-in (app/standins/s3-server.ts) with its default keys; never used in production. */
export const LOCAL_S3 = {
  endpoint: "http://127.0.0.1:4569",
  region: "us-east-1",
  bucket: "dioptra-files",
  accessKeyId: "S3RVER",
  secretAccessKey: "S3RVER",
} as const;

/** Reads and checks the settings; throws one error naming every problem. */
export function loadEnv(source: Record<string, string | undefined> = process.env): Env {
  const production = source.NODE_ENV === "production" && source.DIOPTRA_DEMO !== "1";
  // Outside production the stand-in is the default; production must name its store explicitly.
  const local = !production && !source.S3_BUCKET;
  const parsed = schema.safeParse({
    ...source,
    ...(local
      ? {
          S3_ENDPOINT: source.S3_ENDPOINT ?? LOCAL_S3.endpoint,
          S3_REGION: source.S3_REGION ?? LOCAL_S3.region,
          S3_BUCKET: LOCAL_S3.bucket,
          S3_ACCESS_KEY_ID: source.S3_ACCESS_KEY_ID ?? LOCAL_S3.accessKeyId,
          S3_SECRET_ACCESS_KEY: source.S3_SECRET_ACCESS_KEY ?? LOCAL_S3.secretAccessKey,
          S3_FORCE_PATH_STYLE: source.S3_FORCE_PATH_STYLE ?? "1",
        }
      : {}),
    DATABASE_URL: source === process.env ? databaseUrl() : (source.DATABASE_URL ?? databaseUrl()),
    SESSION_SECRET: source.SESSION_SECRET ?? (production ? undefined : "dioptra-local-development-secret"),
  });
  if (!parsed.success) {
    const problems = parsed.error.issues.map((i) => `${i.path.join(".")}: ${i.message}`).join("; ");
    throw new Error(`Invalid environment: ${problems}`);
  }
  return parsed.data;
}

export const env = loadEnv();

/** The only values that reach the browser. */
export function publicEnv() {
  return { demo: env.DIOPTRA_DEMO };
}
