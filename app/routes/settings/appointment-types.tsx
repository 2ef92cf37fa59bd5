import { formatMoney } from "~/lib/format";
import { createColumnHelper } from "@tanstack/react-table";
import { getFormProps, getInputProps, getSelectProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/appointment-types";
import { ErrorList, Field, SelectField } from "~/components/forms";
import { DataTable } from "~/components/data-table";
import { EditLink, SettingsPage } from "~/components/settings-page";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { requireRole } from "~/utils/auth.server";
import {
  appointmentTypesPage,
  saveAppointmentType,
  setReminderHours,
} from "~/models/settings/appointment-types.server";
import { ROLE_LABEL } from "~/utils/nav";
import { redirectWithToast } from "~/utils/toast.server";
import { decimalField } from "~/utils/number-field";

const ROLES = ["owner", "optometrist", "receptionist"] as const;

const typeSchema = z.object({
  intent: z.literal("save"),
  id: z.uuid().optional(),
  name: z.string({ error: "Give the type a name." }).trim().min(2, "Give the type a name.").max(80),
  durationMinutes: decimalField(
    "Give the length in minutes.",
    z.number().int("Whole minutes.").min(5, "At least 5 minutes.").max(480, "At most 480 minutes (8 hours)."),
  ),
  defaultFeeItemId: z.union([z.literal(""), z.uuid()]).default(""),
  recallMonths: decimalField(
    "Give a number of months, or leave it empty.",
    z.number().int("Whole months.").min(1, "At least 1 month.").max(120, "At most 120 months."),
  ).optional(),
  performerRoles: z.array(z.enum(ROLES), { error: "Choose who may perform it." }).min(1, "Choose who may perform it."),
  routineExam: z.literal("on").optional(),
  onlineBooking: z.literal("on").optional(),
  active: z.literal("on").optional(),
});

const reminderSchema = z.object({
  intent: z.literal("reminder"),
  reminderHoursBefore: decimalField(
    "Give a number of hours.",
    z.number().int("Whole hours.").min(1, "At least 1 hour.").max(168, "At most 168 hours (a week)."),
  ),
});

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  return appointmentTypesPage(new URL(request.url).searchParams.get("edit"));
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const actor = { userId: user.id, request };
  const formData = await request.formData();
  if (formData.get("intent") === "reminder") {
    const submission = parseWithZod(formData, { schema: reminderSchema });
    if (submission.status !== "success") return data(submission.reply(), { status: 400 });
    await setReminderHours(submission.value.reminderHoursBefore, actor);
    return redirectWithToast("/settings/appointment-types", {
      kind: "success",
      title: `Reminders go out ${submission.value.reminderHoursBefore} hours before`,
    });
  }
  const submission = parseWithZod(formData, { schema: typeSchema });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  const v = submission.value;
  const saved = await saveAppointmentType(
    v.id,
    {
      name: v.name,
      durationMinutes: v.durationMinutes,
      defaultFeeItemId: v.defaultFeeItemId || null,
      recallMonths: v.recallMonths ?? null,
      performerRoles: v.performerRoles,
      routineExam: v.routineExam === "on",
      onlineBooking: v.onlineBooking === "on",
      active: v.active === "on",
    },
    actor,
  );
  if (!saved)
    return data(submission.reply({ formErrors: ["That appointment type no longer exists."] }), { status: 404 });
  return redirectWithToast("/settings/appointment-types", { kind: "success", title: `${v.name} saved` });
}

type Type = Awaited<ReturnType<typeof loader>>["types"][number];
const col = createColumnHelper<Type>();

export default function AppointmentTypes({ loaderData, actionData }: Route.ComponentProps) {
  const { types, fees, editing, reminderHoursBefore, currency } = loaderData;
  const navigation = useNavigation();
  const isReminder =
    (actionData as { initialValue?: { intent?: string } } | undefined)?.initialValue?.intent === "reminder";
  const [form, fields] = useForm({
    id: `type-${editing?.id ?? "new"}`,
    lastResult: navigation.state === "idle" && !isReminder ? (actionData as never) : null,
    defaultValue: editing
      ? {
          ...editing,
          durationMinutes: String(editing.durationMinutes),
          recallMonths: editing.recallMonths ? String(editing.recallMonths) : "",
          defaultFeeItemId: editing.defaultFeeItemId ?? "",
          routineExam: editing.routineExam ? "on" : undefined,
          onlineBooking: editing.onlineBooking ? "on" : undefined,
          active: editing.active ? "on" : undefined,
        }
      : { durationMinutes: "30", performerRoles: ["owner", "optometrist"], routineExam: "on", active: "on" },
    onValidate: ({ formData }) => parseWithZod(formData, { schema: typeSchema }),
    shouldValidate: "onBlur",
  });
  const [rForm, rFields] = useForm({
    id: "reminder",
    lastResult: navigation.state === "idle" && isReminder ? (actionData as never) : null,
    defaultValue: { reminderHoursBefore: String(reminderHoursBefore) },
  });
  const feeName = (id: string | null) => {
    const f = fees.find((x) => x.id === id);
    return f ? `${f.code} · ${f.description} (${formatMoney(f.priceMinor, currency)})` : "None";
  };
  const columns = [
    col.accessor("name", { header: "Name", meta: { className: "font-semibold" } }),
    col.accessor("durationMinutes", { header: "Length", cell: (c) => `${c.getValue()} min` }),
    col.accessor("defaultFeeItemId", { header: "Default fee line", cell: (c) => feeName(c.getValue()) }),
    col.accessor("performerRoles", {
      header: "Performed by",
      cell: (c) =>
        c
          .getValue()
          .map((r) => ROLE_LABEL[r])
          .join(", "),
    }),
    col.accessor("recallMonths", {
      header: "Recall",
      cell: ({ row: { original: t } }) =>
        !t.routineExam ? "Not a routine exam" : t.recallMonths ? `${t.recallMonths} months` : "Practice default by age",
    }),
    col.accessor("active", {
      header: "Offered",
      cell: ({ row: { original: t } }) => (
        <>
          {t.active ? (
            <StatusBadge tone="success">Offered</StatusBadge>
          ) : (
            <StatusBadge tone="warning">Withdrawn</StatusBadge>
          )}
          {t.active && t.onlineBooking ? (
            <span className="mt-1 block text-xs text-muted">also bookable online</span>
          ) : null}
        </>
      ),
    }),
    col.display({
      id: "edit",
      header: () => <span className="sr-only">Edit</span>,
      cell: ({ row: { original: t } }) => <EditLink id={t.id} what={t.name} />,
    }),
  ];
  return (
    <SettingsPage
      title="Appointment types"
      description="The kinds of visit the practice books: length, default fee line, who may perform them and the recall interval."
      list={{
        title: "Types",
        content: (
          <DataTable
            data={types}
            columns={columns}
            getRowId={(t) => t.id}
            caption="Appointment types"
            empty="No types yet."
          />
        ),
      }}
    >
      <Card title={editing ? `Edit ${editing.name}` : "Add a type"}>
        <Form method="post" {...getFormProps(form)} className="grid gap-4 sm:grid-cols-2" key={editing?.id ?? "new"}>
          <input type="hidden" name="intent" value="save" />
          {editing ? <input type="hidden" name="id" value={editing.id} /> : null}
          {form.errors?.length ? (
            <div className="sm:col-span-2">
              <Notice tone="error" title="Not saved">
                {form.errors.join(" ")}
              </Notice>
            </div>
          ) : null}
          <Field label="Name" errors={fields.name.errors} inputProps={getInputProps(fields.name, { type: "text" })} />
          <Field
            label="Length (minutes)"
            errors={fields.durationMinutes.errors}
            inputProps={getInputProps(fields.durationMinutes, { type: "number" })}
          />
          <SelectField
            label="Default fee line"
            errors={fields.defaultFeeItemId.errors}
            selectProps={getSelectProps(fields.defaultFeeItemId)}
          >
            <option value="">None</option>
            {fees.map((f) => (
              <option key={f.id} value={f.id}>
                {f.code} · {f.description} ({formatMoney(f.priceMinor, currency)})
              </option>
            ))}
          </SelectField>
          <Field
            label="Recall after (months)"
            hint="Leave empty for the practice default by age."
            errors={fields.recallMonths.errors}
            inputProps={getInputProps(fields.recallMonths, { type: "number" })}
          />
          <fieldset className="sm:col-span-2">
            <legend className="mb-1 text-sm font-semibold">Who may perform it</legend>
            <div className="flex flex-wrap gap-4">
              {ROLES.map((r) => (
                <label key={r} className="flex items-center gap-2 text-sm">
                  <input
                    type="checkbox"
                    name="performerRoles"
                    value={r}
                    defaultChecked={(editing?.performerRoles ?? ["owner", "optometrist"]).includes(r)}
                    className="size-4 accent-accent-700"
                  />
                  {ROLE_LABEL[r]}
                </label>
              ))}
            </div>
            <ErrorList errors={fields.performerRoles.errors} />
          </fieldset>
          <label className="flex items-center gap-2 text-sm">
            <input
              type="checkbox"
              name="routineExam"
              defaultChecked={editing ? editing.routineExam : true}
              className="size-4 accent-accent-700"
            />
            A routine exam (restarts the patient&apos;s recall clock)
          </label>
          <label className="flex items-center gap-2 text-sm">
            <input
              type="checkbox"
              name="active"
              defaultChecked={editing ? editing.active : true}
              className="size-4 accent-accent-700"
            />
            Offered for booking
          </label>
          <label className="flex items-center gap-2 text-sm">
            <input
              type="checkbox"
              name="onlineBooking"
              defaultChecked={editing ? editing.onlineBooking : false}
              className="size-4 accent-accent-700"
            />
            Patients may book it themselves online, in free slots
          </label>
          <div className="flex gap-3 sm:col-span-2">
            <Button type="submit" pending={navigation.state === "submitting"}>
              {editing ? "Save changes" : "Add type"}
            </Button>
            {editing ? (
              <Link
                to="/settings/appointment-types"
                className="self-center font-semibold text-accent-700 underline underline-offset-4"
              >
                Cancel editing
              </Link>
            ) : null}
          </div>
        </Form>
      </Card>
      <Card title="Reminder e-mails">
        <Form method="post" {...getFormProps(rForm)} className="flex flex-wrap items-end gap-4">
          <input type="hidden" name="intent" value="reminder" />
          <div className="w-64">
            <Field
              label="Send the reminder this many hours before"
              errors={rFields.reminderHoursBefore.errors}
              inputProps={getInputProps(rFields.reminderHoursBefore, { type: "number" })}
            />
          </div>
          <Button type="submit" variant="secondary">
            Save reminder time
          </Button>
        </Form>
      </Card>
    </SettingsPage>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Appointment types · Dioptra" }];
