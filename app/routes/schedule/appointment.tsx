import { getFormProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/appointment";
import { StatusCommands, usePolling } from "./day-ui";
import { statusAction } from "~/models/schedule/day.server";
import { isoTime } from "~/models/schedule/schedule-api.server";
import { scheduleReferenceData } from "~/models/schedule/schedule-data.server";
import { appointmentForPage, appointmentMessagesOf, latestExamIdOf } from "~/models/schedule/appointment-view.server";
import { appointmentHistory } from "~/models/schedule/history.server";
import { AppointmentStatus } from "~/components/schedule/status-ui";
import { ErrorList } from "~/components/forms";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input, Select } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { isMovable, STATUS_LABEL } from "~/lib/scheduling/status";
import { formatLocal, localParts, toZonedIso } from "~/lib/scheduling/time";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { sendReminderNow } from "~/models/schedule/reminders.server";
import { BookingError, moveAppointment, practiceSchedule } from "~/models/schedule/schedule.server";
import { redirectWithToast } from "~/utils/toast.server";
import { notFound } from "~/utils/failure.server";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  if (!z.uuid().safeParse(params.appointmentId).success) notFound("No such appointment.");
  const { timeZone } = await practiceSchedule();
  const a = await appointmentForPage(params.appointmentId);
  if (!a) notFound("No such appointment.");
  const history = await appointmentHistory(a.id, timeZone);
  const messages = await appointmentMessagesOf(a.id);
  const examId = await latestExamIdOf(a.id);
  const { providers } = await scheduleReferenceData();
  const local = localParts(a.start, timeZone);
  return {
    role: user.role,
    timeZone,
    today: localParts(new Date(), timeZone).date,
    appointment: {
      id: a.id,
      status: a.status,
      when: `${formatLocal(a.start, timeZone)}–${formatLocal(a.end, timeZone, { withDate: false })}`,
      startIso: toZonedIso(a.start, timeZone),
      date: local.date,
      time: formatLocal(a.start, timeZone, { withDate: false }),
      notes: a.notes,
      providerId: a.providerId,
      providerName: a.providerName,
      patientId: a.patientId,
      patientName: `${a.first} ${a.last}`,
      typeName: a.typeName,
      movable: isMovable(a.status),
      examUrl: examId ? `/patients/${a.patientId}/exams/${examId}` : null,
    },
    history,
    messages: messages.map((m) => ({
      kind: m.kind,
      status: m.status,
      dueAt: formatLocal(m.dueAt, timeZone),
      sentAt: m.sentAt ? formatLocal(m.sentAt, timeZone) : null,
      reason: m.skippedReason,
      error: m.lastError,
    })),
    providers: providers.map(({ id, name }) => ({ id, name })),
  };
}

function moveSchema(timeZone: string) {
  return z
    .object({
      intent: z.literal("move"),
      date: z.iso.date({ error: "Give the day." }),
      time: z.string({ error: "Give the time." }).regex(/^\d{2}:\d{2}$/, "Give the time as HH:MM."),
      providerId: z.uuid({ error: "Choose a provider." }),
    })
    .transform((v, ctx) => {
      const start = isoTime(timeZone, "start").safeParse(`${v.date}T${v.time}`);
      if (!start.success) {
        ctx.addIssue({
          code: "custom",
          path: ["time"],
          message: `That time does not exist in ${timeZone} on that day (the clocks change).`,
        });
        return z.NEVER;
      }
      return { ...v, start: start.data };
    });
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const formData = await request.clone().formData();
  if (formData.get("intent") === "status") return statusAction(request);
  if (formData.get("intent") === "remind") {
    const result = await sendReminderNow(user.id, params.appointmentId, request);
    if (!result.ok) return data({ remindError: result.error }, { status: 409 });
    return redirectWithToast(`/schedule/appointments/${params.appointmentId}`, {
      kind: "success",
      title: "Reminder on its way",
      description: "It appears in the e-mail log once sent.",
    });
  }
  const { timeZone } = await practiceSchedule();
  const submission = parseWithZod(formData, { schema: moveSchema(timeZone) });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  try {
    await moveAppointment(
      user,
      params.appointmentId,
      { start: submission.value.start, providerId: submission.value.providerId },
      request,
    );
  } catch (error) {
    if (error instanceof BookingError)
      return data(
        submission.reply({
          formErrors: [error.message],
          fieldErrors: error.fieldErrors.start ? { time: error.fieldErrors.start } : {},
        }),
        { status: error.status },
      );
    throw error;
  }
  return redirectWithToast(`/schedule/appointments/${params.appointmentId}`, {
    kind: "success",
    title: "Appointment moved",
    description: `Now ${formatLocal(submission.value.start, timeZone)}.`,
  });
}

const KIND_LABEL = {
  confirmation: "Confirmation",
  reminder: "Reminder",
  update: "Calendar update (moved)",
  cancellation: "Cancellation notice",
} as const;
const MSG_LABEL = { queued: "Waiting to send", sent: "Sent", skipped: "Not sent", failed: "Failed" } as const;

export default function AppointmentPage({ loaderData, actionData }: Route.ComponentProps) {
  const { appointment: a, history, messages, providers, role, timeZone, today } = loaderData;
  const navigation = useNavigation();
  usePolling(10);
  const remindError = (actionData as { remindError?: string } | undefined)?.remindError;
  const [form, fields] = useForm({
    id: "move",
    lastResult: navigation.state === "idle" && !remindError ? (actionData as never) : null,
    defaultValue: { date: a.date, time: a.time, providerId: a.providerId },
  });
  return (
    <>
      <PageHeader
        title={`${a.patientName} · ${a.typeName}`}
        description={`${a.when} with ${a.providerName} (practice time, ${timeZone})`}
        actions={
          <>
            <Link
              to={`/schedule?date=${a.date}`}
              className="font-semibold text-accent-700 underline underline-offset-4"
            >
              Back to the calendar
            </Link>
          </>
        }
      />
      <div className="grid gap-6 lg:grid-cols-2">
        <Card title="Status">
          <p className="mb-3 flex items-center gap-2">
            <AppointmentStatus status={a.status} />
          </p>
          <StatusCommands
            id={a.id}
            status={a.status}
            role={role}
            name={a.patientName}
            date={a.date}
            today={today}
            action={`/schedule/appointments/${a.id}`}
          />
          {a.examUrl ? (
            <p className="mt-4">
              <Link to={a.examUrl} className="font-semibold text-accent-700 underline underline-offset-4">
                Open the exam
              </Link>
            </p>
          ) : null}
          {(role === "owner" || role === "receptionist") && a.status !== "cancelled" && a.status !== "no_show" ? (
            <p className="mt-4">
              <Link
                to={`/billing/invoices/new?appointment=${a.id}`}
                className="font-semibold text-accent-700 underline underline-offset-4"
              >
                Raise invoice
              </Link>{" "}
              <span className="text-sm text-muted">with this appointment type&apos;s fee filled in</span>
            </p>
          ) : null}
          <p className="mt-4">
            <Link
              to={`/patients/${a.patientId}`}
              className="font-semibold text-accent-700 underline underline-offset-4"
            >
              Patient&apos;s chart
            </Link>
          </p>
          {a.notes ? <p className="mt-4 text-sm">Note: {a.notes}</p> : null}
          <h3 className="mt-6 mb-2 font-semibold">History</h3>
          <ol className="space-y-1 text-sm">
            {history.map((h, i) => (
              <li key={i}>
                {h.at}: {h.what} by {h.by}
              </li>
            ))}
          </ol>
        </Card>
        <Card title="Move">
          {a.movable ? (
            <Form method="post" {...getFormProps(form)} className="space-y-4">
              <input type="hidden" name="intent" value="move" />
              {form.errors?.length ? (
                <Notice tone="error" title="Not moved">
                  {form.errors.join(" ")}
                </Notice>
              ) : null}
              <div className="grid gap-4 sm:grid-cols-3">
                <div>
                  <label htmlFor={fields.date.id} className="mb-1 block text-sm font-semibold">
                    Day
                  </label>
                  <Input
                    id={fields.date.id}
                    name={fields.date.name}
                    type="date"
                    defaultValue={a.date}
                    aria-invalid={fields.date.errors ? true : undefined}
                  />
                  <ErrorList errors={fields.date.errors} />
                </div>
                <div>
                  <label htmlFor={fields.time.id} className="mb-1 block text-sm font-semibold">
                    Time
                  </label>
                  <Input
                    id={fields.time.id}
                    name={fields.time.name}
                    type="time"
                    step={300}
                    defaultValue={a.time}
                    aria-invalid={fields.time.errors ? true : undefined}
                  />
                  <ErrorList errors={fields.time.errors} />
                </div>
                <div>
                  <label htmlFor={fields.providerId.id} className="mb-1 block text-sm font-semibold">
                    With
                  </label>
                  <Select id={fields.providerId.id} name={fields.providerId.name} defaultValue={a.providerId}>
                    {providers.map((p) => (
                      <option key={p.id} value={p.id}>
                        {p.name}
                      </option>
                    ))}
                  </Select>
                  <ErrorList errors={fields.providerId.errors} />
                </div>
              </div>
              <Button type="submit" pending={navigation.state === "submitting"}>
                Move appointment
              </Button>
            </Form>
          ) : (
            <p className="text-muted">A {STATUS_LABEL[a.status].toLowerCase()} appointment is not moved.</p>
          )}
        </Card>
        <Card title="E-mails to the patient" className="lg:col-span-2">
          {messages.length === 0 ? <p className="text-muted">None.</p> : null}
          {a.movable ? (
            <Form method="post" className="mb-4">
              <input type="hidden" name="intent" value="remind" />
              <Button
                type="submit"
                variant="secondary"
                pending={navigation.state === "submitting" && navigation.formData?.get("intent") === "remind"}
              >
                Send the reminder now
              </Button>
              {remindError ? (
                <p role="alert" className="mt-1 text-sm font-semibold text-red-800">
                  ✕ {remindError}
                </p>
              ) : null}
            </Form>
          ) : null}
          <ul className="space-y-2 text-sm">
            {messages.map((m, i) => (
              <li key={`${m.kind}-${i}`}>
                <span className="font-semibold">{KIND_LABEL[m.kind]}</span>: {MSG_LABEL[m.status]}
                {m.sentAt ? ` ${m.sentAt}` : m.status === "queued" ? ` (due ${m.dueAt})` : ""}
                {m.reason ? ` (${m.reason})` : ""}
                {m.error ? ` · last error: ${m.error}` : ""}
              </li>
            ))}
          </ul>
        </Card>
      </div>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Appointment · Dioptra" }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
