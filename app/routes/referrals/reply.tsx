import { type SubmissionResult } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/reply";
import { Done, NameField, SentReplies, Shell, useLast, type ActionData } from "./reply-parts";
import { linkAccess, linkRefusal } from "~/models/referrals/public.server";
import {
  acknowledge,
  loadReferral,
  publicSummary,
  reply,
  ReferralError,
  REPLY_FILE_MAX_BYTES,
  setAppointment,
  sniffType,
} from "~/models/referrals/referrals.server";
import { verifyLink } from "~/models/referrals/links.server";
import { ErrorList, Field } from "~/components/forms";
import { replyErrors as errorsOf, serverInput } from "~/components/server-form";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Textarea } from "~/components/ui/input";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { formatDate } from "~/lib/format";

const name = z
  .string({ error: "Give your name." })
  .trim()
  .min(2, "Give your name.")
  .max(120, "At most 120 characters.");
const isoDate = z
  .string({ error: "Give the appointment date." })
  .regex(/^\d{4}-\d{2}-\d{2}$/, "Give the date as YYYY-MM-DD.")
  .refine(
    (d) => !Number.isNaN(Date.parse(`${d}T00:00:00Z`)) && new Date(`${d}T00:00:00Z`).toISOString().startsWith(d),
    "That date does not exist.",
  )
  .refine((d) => {
    const t = Date.parse(`${d}T00:00:00Z`);
    return t > Date.now() - 365 * 86_400_000 && t < Date.now() + 730 * 86_400_000;
  }, "Give a date within a year before or two years after today.");

const ackSchema = z.object({ intent: z.literal("acknowledge"), name });
const apptSchema = z.object({ intent: z.literal("appointment"), name, date: isoDate });
const replySchema = z.object({
  intent: z.literal("reply"),
  name,
  body: z.string().trim().max(4000, "Keep the reply under 4,000 characters.").default(""),
});

/** Every visit to the link is audited, accepted or not; a refused link shows nothing of the referral. */
export async function loader({ request, params }: Route.LoaderArgs) {
  const check = await verifyLink(params.token);
  if (!check.ok) {
    await linkRefusal(check, request, "page");
    const expired = check.reason === "expired" || check.reason === "revoked";
    return data(
      { state: "refused" as const, expired },
      { status: expired ? 410 : 404, headers: { "referrer-policy": "no-referrer", "cache-control": "no-store" } },
    );
  }
  const { referral, patient } = await loadReferral(check.referralId);
  if (referral.status === "withdrawn" || referral.status === "draft" || referral.status === "queued") {
    await linkRefusal(
      { ok: false, reason: "revoked", linkId: check.linkId, referralId: check.referralId },
      request,
      "page (referral not open)",
    );
    return data(
      { state: "refused" as const, expired: true },
      { status: 410, headers: { "referrer-policy": "no-referrer", "cache-control": "no-store" } },
    );
  }
  await linkAccess(check, patient.id, request, "page");
  return data(
    { state: "ok" as const, summary: await publicSummary(check.referralId, check.linkId) },
    { headers: { "referrer-policy": "no-referrer", "cache-control": "no-store" } },
  );
}

export async function action({ request, params }: Route.ActionArgs) {
  const check = await verifyLink(params.token);
  if (!check.ok) {
    await linkRefusal(check, request, "action");
    throw data(
      { error: "This link is not valid any more." },
      { status: check.reason === "expired" || check.reason === "revoked" ? 410 : 404 },
    );
  }
  const length = Number(request.headers.get("content-length") ?? 0);
  if (length > REPLY_FILE_MAX_BYTES + 64 * 1024)
    return data(
      {
        intent: "reply",
        result: {
          status: "error",
          error: { file: ["The file is larger than 10 MB. Send a smaller PDF or image."] },
        } as SubmissionResult<string[]>,
      },
      { status: 413 },
    );
  const formData = await request.formData();
  const intent = String(formData.get("intent") ?? "");
  try {
    if (intent === "acknowledge") {
      const s = parseWithZod(formData, { schema: ackSchema });
      if (s.status !== "success") return data({ intent, result: s.reply() }, { status: 400 });
      await acknowledge(check.referralId, check.linkId, s.value.name, request);
      return data({
        intent,
        result: s.reply({ resetForm: true }),
        done: "Thank you: receipt acknowledged. The practice can see it now.",
      });
    }
    if (intent === "appointment") {
      const s = parseWithZod(formData, { schema: apptSchema });
      if (s.status !== "success") return data({ intent, result: s.reply() }, { status: 400 });
      await setAppointment(check.referralId, check.linkId, s.value.name, s.value.date, request);
      return data({
        intent,
        result: s.reply({ resetForm: true }),
        done: `Appointment date ${formatDate(s.value.date, { style: "long" })} recorded.`,
      });
    }
    if (intent === "reply") {
      const s = parseWithZod(formData, { schema: replySchema });
      if (s.status !== "success") return data({ intent, result: s.reply() }, { status: 400 });
      const raw = formData.get("file");
      let file: { name: string; bytes: Uint8Array; type: NonNullable<ReturnType<typeof sniffType>> } | null = null;
      if (raw && typeof raw === "object" && raw.size > 0) {
        if (raw.size > REPLY_FILE_MAX_BYTES)
          return data(
            { intent, result: s.reply({ fieldErrors: { file: ["The file is larger than 10 MB."] } }) },
            { status: 400 },
          );
        const bytes = new Uint8Array(await raw.arrayBuffer());
        const type = sniffType(bytes);
        if (!type)
          return data(
            { intent, result: s.reply({ fieldErrors: { file: ["Upload a PDF, JPEG or PNG file."] } }) },
            { status: 400 },
          );
        file = { name: raw.name.slice(0, 200) || "consult-letter", bytes, type };
      }
      if (!s.value.body && !file)
        return data(
          {
            intent,
            result: s.reply({ fieldErrors: { body: ["Write a short reply or attach your consult letter."] } }),
          },
          { status: 400 },
        );
      await reply(check.referralId, check.linkId, { name: s.value.name, body: s.value.body, file }, request);
      return data({
        intent,
        result: s.reply({ resetForm: true }),
        done: "Thank you: your reply has been sent to the practice and added to the patient's record.",
      });
    }
  } catch (error) {
    if (error instanceof ReferralError)
      return data(
        {
          intent,
          result: { status: "error", error: { "": [error.message] } } as SubmissionResult<string[]>,
        },
        { status: error.status },
      );
    throw error;
  }
  return data(
    { intent, result: { status: "error", error: { "": ["Unknown request."] } } as SubmissionResult<string[]> },
    { status: 400 },
  );
}

export default function ReplyPage({ loaderData, actionData, params }: Route.ComponentProps) {
  const navigation = useNavigation();
  const a = actionData as ActionData;
  const responder = loaderData.state === "ok" ? loaderData.summary.responder : "";
  // Checked by the server only (the page ships no validation code): errors come back with the reply.
  const ack = useLast("acknowledge", a);
  const appt = useLast("appointment", a);
  const rep = useLast("reply", a);
  // A form that did its work is drawn afresh (empty), so what was typed cannot be sent twice.
  const formKey = (intent: string) => (a?.intent === intent && a.done ? `done-${a.done}` : intent);
  if (loaderData.state !== "ok") {
    return (
      <Shell>
        <h1 className="text-2xl">{loaderData.expired ? "This link has expired" : "This link is not valid"}</h1>
        <p className="mt-3 max-w-prose text-muted">
          {loaderData.expired
            ? "Referral links work for a limited time and stop working when a referral is withdrawn. Ask the practice that sent the referral for a new link."
            : "The address may be incomplete or mistyped. Copy the whole link from the e-mail, or ask the practice that sent the referral for a new one."}
        </p>
      </Shell>
    );
  }
  const s = loaderData.summary;
  const busy = navigation.state === "submitting" ? String(navigation.formData?.get("intent") ?? "") : "";
  const replyErrors =
    (a?.intent === "reply" ? (a.result.error as Record<string, string[]> | undefined) : undefined) ?? {};
  return (
    <Shell practice={s.practice.name}>
      <h1 className="text-2xl sm:text-3xl">Referral {s.reference}</h1>
      <p className="mt-1 text-muted">
        From {s.optometrist.name}
        {s.optometrist.licence ? ` (registration ${s.optometrist.licence})` : ""}, {s.practice.name}
        {s.sentOn ? ` · sent ${s.sentOn}` : ""}
      </p>
      {a?.intent && !a.done && a.result.error?.[""] ? (
        <div className="mt-4">
          <Notice tone="error" title="Not done">
            {(a.result.error[""] ?? []).join(" ")}
          </Notice>
        </div>
      ) : null}
      <div className="mt-6 grid gap-6">
        <Card title="Summary">
          <dl className="grid gap-x-6 gap-y-2 text-sm sm:grid-cols-[10rem_1fr]">
            <dt className="text-muted">Patient</dt>
            <dd className="font-semibold">
              {s.patient.name}, born {formatDate(s.patient.dateOfBirth)}
            </dd>
            <dt className="text-muted">Urgency</dt>
            <dd>
              {s.urgency} ({s.timeFrame})
            </dd>
            <dt className="text-muted">Reason</dt>
            <dd className="whitespace-pre-wrap">{s.reason}</dd>
            <dt className="text-muted">Findings</dt>
            <dd>
              <ul className="list-disc pl-5">
                {s.findings.map((f) => (
                  <li key={f.message}>
                    {f.message} <span className="text-muted">({f.value})</span>
                  </li>
                ))}
              </ul>
              {s.additionalFindings ? <p className="mt-1 whitespace-pre-wrap">{s.additionalFindings}</p> : null}
            </dd>
            <dt className="text-muted">Status</dt>
            <dd className="flex flex-wrap gap-2">
              {s.acknowledgedAt ? (
                <StatusBadge tone="success">
                  Acknowledged {s.acknowledgedAt}
                  {s.acknowledgedBy ? ` by ${s.acknowledgedBy}` : ""}
                </StatusBadge>
              ) : (
                <StatusBadge tone="warning">Not yet acknowledged</StatusBadge>
              )}
              {s.appointmentOn ? <StatusBadge tone="success">Appointment {s.appointmentOn}</StatusBadge> : null}
              {s.replies.length ? <StatusBadge tone="success">Reply sent</StatusBadge> : null}
            </dd>
          </dl>
          <p className="mt-4">
            <a
              href={`/r/${params.token}/letter.pdf`}
              className="font-semibold text-accent-700 underline underline-offset-4"
              rel="noreferrer"
            >
              Open the full letter (PDF)
            </a>
          </p>
        </Card>

        <Card title="Acknowledge receipt">
          <Done a={a} intent="acknowledge" />
          {s.acknowledgedAt ? (
            <p className="text-sm">
              Receipt acknowledged on {s.acknowledgedAt}
              {s.acknowledgedBy ? ` by ${s.acknowledgedBy}` : ""}.
            </p>
          ) : (
            <Form
              method="post"
              id="acknowledge"
              key={formKey("acknowledge")}
              noValidate
              className="grid gap-4 sm:grid-cols-[1fr_auto] sm:items-end"
            >
              <input type="hidden" name="intent" value="acknowledge" />
              <NameField
                errors={errorsOf(ack, "name")}
                input={serverInput("acknowledge", ack, "name")}
                responder={responder}
              />
              <Button type="submit" pending={busy === "acknowledge"}>
                Acknowledge receipt
              </Button>
            </Form>
          )}
        </Card>

        <Card title="Appointment">
          <Done a={a} intent="appointment" />
          <Form
            method="post"
            id="appointment"
            key={formKey("appointment")}
            noValidate
            className="grid gap-4 sm:grid-cols-[1fr_1fr_auto] sm:items-end"
          >
            <input type="hidden" name="intent" value="appointment" />
            <NameField
              errors={errorsOf(appt, "name")}
              input={serverInput("appointment", appt, "name")}
              responder={responder}
            />
            <Field
              label="Appointment date"
              errors={errorsOf(appt, "date")}
              inputProps={serverInput("appointment", appt, "date", "date")}
            />
            <Button type="submit" variant="secondary" pending={busy === "appointment"}>
              Save the date
            </Button>
          </Form>
        </Card>

        <Card title="Reply to the practice">
          <Done a={a} intent="reply" />
          <Form
            method="post"
            encType="multipart/form-data"
            id="reply"
            key={formKey("reply")}
            noValidate
            className="grid gap-4"
          >
            <input type="hidden" name="intent" value="reply" />
            <NameField errors={errorsOf(rep, "name")} input={serverInput("reply", rep, "name")} responder={responder} />
            <div>
              <label htmlFor="reply-body" className="mb-1 block text-sm font-semibold">
                Short reply
              </label>
              <Textarea
                id="reply-body"
                name="body"
                defaultValue={serverInput("reply", rep, "body").defaultValue}
                rows={5}
                aria-invalid={errorsOf(rep, "body") ? true : undefined}
                aria-describedby={errorsOf(rep, "body") ? "reply-body-error" : undefined}
              />
              <ErrorList id="reply-body-error" errors={errorsOf(rep, "body")} />
            </div>
            <div>
              <label htmlFor="reply-file" className="mb-1 block text-sm font-semibold">
                Consult letter (optional: PDF, JPEG or PNG, up to 10 MB)
              </label>
              <input
                id="reply-file"
                name="file"
                type="file"
                accept="application/pdf,image/jpeg,image/png"
                className="block text-sm"
                aria-invalid={replyErrors.file?.length ? true : undefined}
                aria-describedby={replyErrors.file?.length ? "reply-file-error" : undefined}
              />
              <ErrorList id="reply-file-error" errors={replyErrors.file} />
            </div>
            <div>
              <Button type="submit" pending={busy === "reply"}>
                Send reply
              </Button>
            </div>
          </Form>
          <SentReplies replies={s.replies} />
        </Card>
        <p className="text-sm text-muted">
          Confidential patient information for the named recipient only. Every visit to this page is recorded.
          Questions: {s.practice.name}
          {s.practice.phone ? `, ${s.practice.phone}` : ""}
          {s.practice.email ? `, ${s.practice.email}` : ""}.
        </p>
      </div>
    </Shell>
  );
}

/** The loader's no-referrer and no-store reach the document (without this export React Router drops them). */
export const headers: Route.HeadersFunction = ({ loaderHeaders, actionHeaders }) => {
  const out = new Headers(loaderHeaders);
  for (const [k, v] of actionHeaders) out.set(k, v);
  if (!out.has("referrer-policy")) out.set("referrer-policy", "no-referrer");
  if (!out.has("cache-control")) out.set("cache-control", "no-store");
  return out;
};

export const meta: Route.MetaFunction = () => [
  { title: "Referral · Dioptra" },
  { name: "robots", content: "noindex, nofollow" },
  { name: "referrer", content: "no-referrer" },
];
