import { dateTimeFormat } from "~/lib/format/intl";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, useActionData, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/home";
import {
  cancellable,
  ownAppointment,
  patientName,
  portalSettings,
  requirePortalPatient,
  visitsOf,
} from "~/models/portal/portal.server";
import { ErrorList } from "~/components/forms";
import { PageHeader } from "~/components/page-header";
import { Button, buttonClass } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Textarea } from "~/components/ui/input";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { STATUS_LABEL, type Status } from "~/lib/scheduling";
import { audit } from "~/utils/audit.server";
import { requestMove } from "~/models/schedule/move-requests.server";
import { BookingError, changeStatus } from "~/models/schedule/schedule.server";
import { redirectWithToast } from "~/utils/toast.server";

const schema = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("cancel"), appointmentId: z.uuid() }),
  z.object({
    intent: z.literal("move"),
    appointmentId: z.uuid(),
    message: z
      .string({ error: "Say when would suit you instead." })
      .trim()
      .min(3, "Say when would suit you instead.")
      .max(500, "Keep it under 500 characters."),
  }),
]);

/** Sent as plain HTML, without scripts: every step below is a link or a form the server answers. */
export const handle = { hydrate: false };

export async function loader({ request }: Route.LoaderArgs) {
  const { user, patientId } = await requirePortalPatient(request);
  // `?cancel=<visit>` is the check before a cancellation: the page asks, the patient confirms.
  const cancelling = new URL(request.url).searchParams.get("cancel");
  const [settings, visits, name] = await Promise.all([portalSettings(), visitsOf(patientId), patientName(patientId)]);
  await audit({
    action: "portal.visits_read",
    actorUserId: user.id,
    patientId,
    entityType: "patient",
    entityId: patientId,
    request,
  });
  const now = Date.now();
  const withRights = visits.map((v) => ({ ...v, canCancel: cancellable(v, settings.cancelCutoffHours, now) }));
  const upcoming = withRights
    .filter((v) => new Date(v.end).getTime() >= now && v.status !== "cancelled" && v.status !== "no_show")
    .reverse();
  return {
    firstName: name?.firstName ?? user.name,
    practice: settings,
    upcoming,
    cancelling: upcoming.some((v) => v.id === cancelling && v.canCancel) ? cancelling : null,
    past: withRights
      .filter((v) => new Date(v.end).getTime() < now || v.status === "cancelled" || v.status === "no_show")
      .slice(0, 12),
  };
}

export async function action({ request }: Route.ActionArgs) {
  const { user, patientId } = await requirePortalPatient(request);
  const submission = parseWithZod(await request.formData(), { schema });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  const v = submission.value;
  const visit = await ownAppointment(patientId, v.appointmentId);
  const settings = await portalSettings();
  if (v.intent === "cancel") {
    if (!cancellable({ start: visit.startsAt, status: visit.status }, settings.cancelCutoffHours)) {
      return data(
        submission.reply({
          formErrors: [
            `Visits can be cancelled online until ${settings.cancelCutoffHours} hours before they start. Please phone ${settings.name}${settings.phone ? ` on ${settings.phone}` : ""}.`,
          ],
        }),
        { status: 409 },
      );
    }
    try {
      await changeStatus(user, visit.id, "cancelled", request);
    } catch (error) {
      if (error instanceof BookingError)
        return data(submission.reply({ formErrors: [error.message] }), { status: error.status });
      throw error;
    }
    return redirectWithToast("/portal", {
      kind: "success",
      title: "Your visit is cancelled",
      description: "A confirmation is on its way by e-mail.",
    });
  }
  if (visit.status !== "booked" && visit.status !== "confirmed")
    return data(submission.reply({ formErrors: ["Only a booked visit that has not started can be moved."] }), {
      status: 409,
    });
  await requestMove({ actorUserId: user.id, patientId, appointmentId: visit.id, message: v.message, request });
  return redirectWithToast("/portal", {
    kind: "success",
    title: "Request sent to the front desk",
    description: "They will contact you to agree a new time.",
  });
}

const tone = (s: Status) => (s === "cancelled" || s === "no_show" ? "error" : s === "completed" ? "success" : "info");

type Reply = { error?: Record<string, string[] | null> | null; initialValue?: Record<string, unknown> | null };

function VisitCard({
  visit,
  timeZone,
  cancelling,
}: {
  visit: Awaited<ReturnType<typeof loader>>["upcoming"][number];
  timeZone: string;
  cancelling: boolean;
}) {
  const reply = useActionData<typeof action>() as Reply | undefined;
  const navigation = useNavigation();
  const when = dateTimeFormat("en-GB", { dateStyle: "full", timeStyle: "short", timeZone }).format(
    new Date(visit.start),
  );
  // The action's reply belongs to the visit whose form was sent.
  const mine = reply?.initialValue?.appointmentId === visit.id;
  const errors = mine ? reply?.error : undefined;
  const sentMessage = mine && typeof reply?.initialValue?.message === "string" ? reply.initialValue.message : "";
  const pending = (intent: string) =>
    navigation.state !== "idle" &&
    navigation.formData?.get("appointmentId") === visit.id &&
    navigation.formData?.get("intent") === intent;
  return (
    <li id={`visit-${visit.id}`} className="rounded-lg border border-line bg-white p-4">
      <p className="font-semibold">{when}</p>
      <p className="text-sm text-muted">
        {visit.typeName} with {visit.providerName}
      </p>
      <p className="mt-2">
        <StatusBadge tone={tone(visit.status)}>{STATUS_LABEL[visit.status]}</StatusBadge>
      </p>
      {visit.moveRequest ? (
        <p className="mt-2 text-sm">
          You asked to move this visit: “{visit.moveRequest}”. The front desk will be in touch.
        </p>
      ) : null}
      {errors?.[""]?.length ? (
        <div className="mt-3">
          <Notice tone="error" title="Not done">
            {errors[""].join(" ")}
          </Notice>
        </div>
      ) : null}
      {cancelling ? (
        <section
          aria-labelledby={`cancel-${visit.id}-heading`}
          className="mt-3 rounded-md border-2 border-red-300 p-3"
          data-testid="cancel-review"
        >
          <h3 id={`cancel-${visit.id}-heading`} className="font-semibold">
            Cancel this visit?
          </h3>
          <p className="mt-1 text-sm">
            {when}, {visit.typeName} with {visit.providerName}. Nothing changes until you press “Yes, cancel it”.
          </p>
          <div className="mt-3 flex flex-wrap items-center gap-4">
            <Form method="post" action="/portal?index">
              <input type="hidden" name="appointmentId" value={visit.id} />
              <Button type="submit" name="intent" value="cancel" variant="danger" pending={pending("cancel")}>
                Yes, cancel it
              </Button>
            </Form>
            <Link to="/portal" className="font-semibold text-accent-700 underline underline-offset-4">
              No, keep the visit
            </Link>
          </div>
        </section>
      ) : null}
      <div className="mt-3 flex flex-wrap items-start gap-2">
        {visit.canCancel && !cancelling ? (
          <Link to={`/portal?cancel=${visit.id}#visit-${visit.id}`} className={buttonClass("danger")}>
            Cancel visit
          </Link>
        ) : null}
        {visit.status === "booked" || visit.status === "confirmed" ? (
          <details className="group w-full" open={Boolean(errors?.message?.length) || undefined}>
            <summary className={buttonClass("secondary", "cursor-pointer list-none")}>Ask to move it</summary>
            <Form method="post" action="/portal?index" className="mt-3 space-y-2">
              <input type="hidden" name="appointmentId" value={visit.id} />
              <label htmlFor={`move-${visit.id}`} className="block text-sm font-semibold">
                When would suit you instead?
              </label>
              <Textarea
                id={`move-${visit.id}`}
                name="message"
                rows={2}
                required
                defaultValue={sentMessage}
                aria-invalid={errors?.message ? true : undefined}
                aria-describedby={errors?.message ? `move-${visit.id}-error` : undefined}
              />
              <ErrorList id={`move-${visit.id}-error`} errors={errors?.message ?? undefined} />
              <Button type="submit" name="intent" value="move" pending={pending("move")}>
                Send request
              </Button>
            </Form>
          </details>
        ) : null}
      </div>
    </li>
  );
}

export default function PortalHome({ loaderData }: Route.ComponentProps) {
  const { firstName, practice, upcoming, past, cancelling } = loaderData;
  return (
    <div className="mx-auto max-w-2xl space-y-6">
      <PageHeader
        title={`Hello, ${firstName}`}
        description={`Your page at ${practice.name}`}
        actions={
          <Link to="/portal/book" className={buttonClass("primary")}>
            Book an eye exam
          </Link>
        }
      />
      <Card title="Upcoming visits">
        {upcoming.length ? (
          <ul className="space-y-3">
            {upcoming.map((v) => (
              <VisitCard key={v.id} visit={v} timeZone={practice.timeZone} cancelling={cancelling === v.id} />
            ))}
          </ul>
        ) : (
          <p className="text-muted">No visits booked.</p>
        )}
        <p className="mt-4 text-sm text-muted">
          You can cancel online until {practice.cancelCutoffHours} hours before a visit. After that, please phone{" "}
          {practice.name}
          {practice.phone ? ` on ${practice.phone}` : ""}.
        </p>
      </Card>
      <Card title="Past visits">
        {past.length ? (
          <ul className="divide-y divide-line">
            {past.map((v) => (
              <li key={v.id} className="flex flex-wrap items-center justify-between gap-2 py-2 text-sm">
                <span>
                  {dateTimeFormat("en-GB", { dateStyle: "medium", timeZone: practice.timeZone }).format(
                    new Date(v.start),
                  )}{" "}
                  · {v.typeName}
                </span>
                <StatusBadge tone={tone(v.status)}>{STATUS_LABEL[v.status]}</StatusBadge>
              </li>
            ))}
          </ul>
        ) : (
          <p className="text-muted">None yet.</p>
        )}
      </Card>
      <nav aria-label="Your pages" className="grid gap-3 sm:grid-cols-3">
        <Link to="/portal/invoices" className={buttonClass("secondary")}>
          Invoices and payments
        </Link>
        <Link to="/portal/prescriptions" className={buttonClass("secondary")}>
          Prescriptions
        </Link>
        <Link to="/portal/reminders" className={buttonClass("secondary")}>
          Reminder choices
        </Link>
      </nav>
    </div>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "My visits · Dioptra" }];
