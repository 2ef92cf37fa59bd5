import { getFormProps, getInputProps, getSelectProps, getTextareaProps, useForm } from "@conform-to/react";
import { createColumnHelper } from "@tanstack/react-table";
import { parseWithZod } from "@conform-to/zod/v4";
import { asc, desc, eq } from "drizzle-orm";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/recipients";
import { ErrorList, Field, SelectField } from "~/components/forms";
import { DataTable } from "~/components/data-table";
import { EditLink, RowIntentButton, SettingsPage } from "~/components/settings-page";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Textarea } from "~/components/ui/input";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { practiceSettings, referralRecipients } from "~/db/schema";
import { DEFAULT_TIME_FRAMES, URGENCY_LABEL } from "~/lib/referrals";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { redirectWithToast } from "~/utils/toast.server";
import { decimalField } from "~/utils/number-field";

const DELIVERY = {
  email: "E-mail (sent from Dioptra)",
  post: "Post (print the PDF)",
  fax: "Fax (print the PDF)",
} as const;

const optionalText = (max: number) => z.string().trim().max(max, `At most ${max} characters.`).default("");

export const recipientSchema = z
  .object({
    intent: z.literal("save"),
    id: z.uuid().optional(),
    name: z
      .string({ error: "Give the ophthalmologist's or clinic's name." })
      .trim()
      .min(2, "Give the ophthalmologist's or clinic's name.")
      .max(120),
    clinic: optionalText(160),
    specialty: optionalText(120),
    email: z.union([z.literal(""), z.email({ error: "Enter a valid e-mail address." })]).default(""),
    phone: optionalText(40),
    addressLine1: optionalText(200),
    addressLine2: optionalText(200),
    city: optionalText(100),
    postcode: optionalText(20),
    preferredDelivery: z.enum(["email", "post", "fax"], { error: "Choose how they prefer to receive letters." }),
    notes: optionalText(1000),
  })
  .refine((v) => v.preferredDelivery !== "email" || v.email !== "", {
    path: ["email"],
    message: "An e-mail address is needed when they receive letters by e-mail.",
  });

const days = (label: string) =>
  decimalField(
    `${label}: give a number of days.`,
    z.number().int("Whole days only.").min(0, "At least 0 days (same day).").max(730, "At most 730 days."),
  );

export const timeFrameSchema = z.object({
  intent: z.literal("timeframes"),
  referralDaysSameDay: days("Same day"),
  referralDaysUrgent: days("Urgent"),
  referralDaysSoon: days("Soon"),
  referralDaysRoutine: days("Routine"),
});

const activeSchema = z.object({ intent: z.enum(["deactivate", "reactivate"]), id: z.uuid() });
const schema = z.union([recipientSchema, timeFrameSchema, activeSchema]);

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  const rows = await db
    .select()
    .from(referralRecipients)
    .orderBy(desc(referralRecipients.active), asc(referralRecipients.name));
  const [p] = await db.select().from(practiceSettings).where(eq(practiceSettings.id, 1));
  const editId = new URL(request.url).searchParams.get("edit");
  const editing = rows.find((r) => r.id === editId) ?? null;
  return {
    recipients: rows.map((r) => ({
      id: r.id,
      name: r.name,
      clinic: r.clinic,
      specialty: r.specialty,
      email: r.email,
      phone: r.phone,
      city: r.city,
      preferredDelivery: r.preferredDelivery,
      active: r.active,
    })),
    editing: editing
      ? {
          id: editing.id,
          name: editing.name,
          clinic: editing.clinic,
          specialty: editing.specialty,
          email: editing.email ?? "",
          phone: editing.phone,
          addressLine1: editing.addressLine1,
          addressLine2: editing.addressLine2,
          city: editing.city,
          postcode: editing.postcode,
          preferredDelivery: editing.preferredDelivery,
          notes: editing.notes,
        }
      : null,
    timeFrames: {
      referralDaysSameDay: String(p?.referralDaysSameDay ?? DEFAULT_TIME_FRAMES.same_day),
      referralDaysUrgent: String(p?.referralDaysUrgent ?? DEFAULT_TIME_FRAMES.urgent),
      referralDaysSoon: String(p?.referralDaysSoon ?? DEFAULT_TIME_FRAMES.soon),
      referralDaysRoutine: String(p?.referralDaysRoutine ?? DEFAULT_TIME_FRAMES.routine),
    },
  };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const formData = await request.formData();
  const intent = formData.get("intent");
  const submission = parseWithZod(formData, {
    schema: intent === "save" ? recipientSchema : intent === "timeframes" ? timeFrameSchema : schema,
  });
  if (submission.status !== "success") return data({ intent, result: submission.reply() }, { status: 400 });
  const v = submission.value;
  if (v.intent === "timeframes") {
    const { intent: _i, ...values } = v;
    await db.transaction(async (tx) => {
      await tx
        .update(practiceSettings)
        .set({ ...values, updatedAt: new Date() })
        .where(eq(practiceSettings.id, 1));
      await audit(
        { action: "practice.referral_time_frames_changed", actorUserId: user.id, detail: values, request },
        tx,
      );
    });
    return redirectWithToast("/settings/recipients", { kind: "success", title: "Referral time frames saved" });
  }
  if (v.intent === "save") {
    const { intent: _i, id, ...values } = v;
    const row = { ...values, email: values.email || null, updatedAt: new Date() };
    const saved = await db.transaction(async (tx) => {
      if (id) {
        const [updated] = await tx
          .update(referralRecipients)
          .set(row)
          .where(eq(referralRecipients.id, id))
          .returning({ id: referralRecipients.id });
        if (!updated) return null;
        await audit(
          {
            action: "referral_recipient.updated",
            actorUserId: user.id,
            entityType: "referral_recipient",
            entityId: id,
            request,
          },
          tx,
        );
        return updated.id;
      }
      const [created] = await tx.insert(referralRecipients).values(row).returning({ id: referralRecipients.id });
      await audit(
        {
          action: "referral_recipient.created",
          actorUserId: user.id,
          entityType: "referral_recipient",
          entityId: created!.id,
          request,
        },
        tx,
      );
      return created!.id;
    });
    if (!saved)
      return data(
        { intent, result: submission.reply({ formErrors: ["That recipient no longer exists."] }) },
        { status: 404 },
      );
    return redirectWithToast("/settings/recipients", {
      kind: "success",
      title: id ? `${values.name} updated` : `${values.name} added to the directory`,
    });
  }
  const active = v.intent === "reactivate";
  const [row] = await db.transaction(async (tx) => {
    const res = await tx
      .update(referralRecipients)
      .set({ active, updatedAt: new Date() })
      .where(eq(referralRecipients.id, v.id))
      .returning({ name: referralRecipients.name });
    if (res.length)
      await audit(
        {
          action: active ? "referral_recipient.reactivated" : "referral_recipient.deactivated",
          actorUserId: user.id,
          entityType: "referral_recipient",
          entityId: v.id,
          request,
        },
        tx,
      );
    return res;
  });
  if (!row) throw data({ error: "Not found." }, { status: 404 });
  return redirectWithToast("/settings/recipients", {
    kind: "success",
    title: active ? `${row.name} can receive referrals again` : `${row.name} hidden from new referrals`,
  });
}

function RecipientForm({
  editing,
  lastResult,
}: {
  editing: Route.ComponentProps["loaderData"]["editing"];
  lastResult: unknown;
}) {
  const navigation = useNavigation();
  const [form, fields] = useForm({
    id: editing ? `recipient-${editing.id}` : "recipient-new",
    lastResult: navigation.state === "idle" ? (lastResult as never) : null,
    defaultValue: editing ?? { preferredDelivery: "email" },
    onValidate: ({ formData }) => parseWithZod(formData, { schema: recipientSchema }),
    shouldValidate: "onBlur",
  });
  return (
    <Card
      title={editing ? `Edit ${editing.name}` : "Add a recipient"}
      actions={
        editing ? (
          <Link
            to="/settings/recipients"
            className="text-sm font-semibold text-accent-700 underline underline-offset-4"
          >
            Cancel editing
          </Link>
        ) : null
      }
    >
      <Form method="post" {...getFormProps(form)} className="grid gap-4 sm:grid-cols-2">
        <input type="hidden" name="intent" value="save" />
        {editing ? <input type="hidden" name="id" value={editing.id} /> : null}
        {form.errors?.length ? (
          <div className="sm:col-span-2">
            <Notice tone="error" title="Not saved">
              {form.errors.join(" ")}
            </Notice>
          </div>
        ) : null}
        <Field
          label="Name"
          hint="The ophthalmologist, or the clinic's referral desk."
          errors={fields.name.errors}
          inputProps={getInputProps(fields.name, { type: "text" })}
        />
        <Field
          label="Clinic or hospital"
          errors={fields.clinic.errors}
          inputProps={getInputProps(fields.clinic, { type: "text" })}
        />
        <Field
          label="Specialty"
          hint="For example glaucoma, medical retina, neuro-ophthalmology."
          errors={fields.specialty.errors}
          inputProps={getInputProps(fields.specialty, { type: "text" })}
        />
        <SelectField
          label="Prefers to receive letters by"
          errors={fields.preferredDelivery.errors}
          selectProps={getSelectProps(fields.preferredDelivery)}
        >
          {Object.entries(DELIVERY).map(([k, label]) => (
            <option key={k} value={k}>
              {label}
            </option>
          ))}
        </SelectField>
        <Field
          label="E-mail"
          errors={fields.email.errors}
          inputProps={getInputProps(fields.email, { type: "email" })}
        />
        <Field label="Phone" errors={fields.phone.errors} inputProps={getInputProps(fields.phone, { type: "tel" })} />
        <Field
          label="Address"
          errors={fields.addressLine1.errors}
          inputProps={getInputProps(fields.addressLine1, { type: "text" })}
        />
        <Field
          label="Address (second line)"
          errors={fields.addressLine2.errors}
          inputProps={getInputProps(fields.addressLine2, { type: "text" })}
        />
        <Field
          label="Town or city"
          errors={fields.city.errors}
          inputProps={getInputProps(fields.city, { type: "text" })}
        />
        <Field
          label="Postcode"
          errors={fields.postcode.errors}
          inputProps={getInputProps(fields.postcode, { type: "text" })}
        />
        <div className="sm:col-span-2">
          <label htmlFor={fields.notes.id} className="mb-1 block text-sm font-semibold">
            Notes for the team
          </label>
          <Textarea {...getTextareaProps(fields.notes)} rows={2} />
          <ErrorList errors={fields.notes.errors} />
        </div>
        <div className="sm:col-span-2">
          <Button
            type="submit"
            pending={navigation.state === "submitting" && navigation.formData?.get("intent") === "save"}
          >
            {editing ? "Save recipient" : "Add recipient"}
          </Button>
        </div>
      </Form>
    </Card>
  );
}

function TimeFrames({
  values,
  lastResult,
}: {
  values: Route.ComponentProps["loaderData"]["timeFrames"];
  lastResult: unknown;
}) {
  const navigation = useNavigation();
  const [form, fields] = useForm({
    id: "timeframes",
    lastResult: navigation.state === "idle" ? (lastResult as never) : null,
    defaultValue: values,
    onValidate: ({ formData }) => parseWithZod(formData, { schema: timeFrameSchema }),
    shouldValidate: "onBlur",
  });
  const rows = [
    ["referralDaysSameDay", URGENCY_LABEL.same_day],
    ["referralDaysUrgent", URGENCY_LABEL.urgent],
    ["referralDaysSoon", URGENCY_LABEL.soon],
    ["referralDaysRoutine", URGENCY_LABEL.routine],
  ] as const;
  return (
    <Card title="Referral time frames">
      <p className="mb-4 text-sm text-muted">
        Days within which a referred patient should be seen, counted from sending. Past it, the referral shows as
        overdue and can be chased. The defaults are common practice; local referral pathways govern.
      </p>
      <Form method="post" {...getFormProps(form)} className="grid gap-4 sm:grid-cols-4">
        <input type="hidden" name="intent" value="timeframes" />
        {rows.map(([name, label]) => (
          <Field
            key={name}
            label={`${label} (days)`}
            errors={fields[name].errors}
            inputProps={getInputProps(fields[name], { type: "number" })}
          />
        ))}
        <div className="sm:col-span-4">
          <Button
            type="submit"
            variant="secondary"
            pending={navigation.state === "submitting" && navigation.formData?.get("intent") === "timeframes"}
          >
            Save time frames
          </Button>
        </div>
      </Form>
    </Card>
  );
}

type Recipient = Awaited<ReturnType<typeof loader>>["recipients"][number];
const col = createColumnHelper<Recipient>();
const recipientColumns = [
  col.accessor("name", { header: "Name", meta: { className: "font-semibold" } }),
  col.accessor("clinic", {
    header: "Clinic and specialty",
    cell: ({ row: { original: r } }) => (
      <>
        {r.clinic || "—"}
        {r.specialty ? <span className="block text-muted">{r.specialty}</span> : null}
      </>
    ),
  }),
  col.accessor("email", {
    header: "Contact",
    cell: ({ row: { original: r } }) => (
      <>
        {r.email ?? "No e-mail"}
        {r.phone ? <span className="block text-muted">{r.phone}</span> : null}
      </>
    ),
  }),
  col.accessor("preferredDelivery", { header: "Receives by", cell: (c) => DELIVERY[c.getValue()].split(" (")[0] }),
  col.accessor("active", {
    header: "Status",
    cell: (c) =>
      c.getValue() ? <StatusBadge tone="success">In use</StatusBadge> : <StatusBadge tone="info">Hidden</StatusBadge>,
  }),
  col.display({
    id: "actions",
    header: () => <span className="sr-only">Actions</span>,
    cell: ({ row: { original: r } }) => (
      <div className="flex flex-wrap gap-2">
        <EditLink id={r.id} what={r.name} />
        <RowIntentButton
          id={r.id}
          intent={r.active ? "deactivate" : "reactivate"}
          label={r.active ? "Hide" : "Use again"}
          what={r.name}
          variant={r.active ? "ghost" : "secondary"}
        />
      </div>
    ),
  }),
];

export default function Recipients({ loaderData, actionData }: Route.ComponentProps) {
  const ad = actionData as { intent?: string; result?: unknown } | undefined;
  return (
    <SettingsPage
      title="Referral recipients"
      description="The ophthalmologists and clinics your optometrists refer to. Letters go to the e-mail address given here."
      list={{
        title: "Directory",
        content: (
          <DataTable
            data={loaderData.recipients}
            columns={recipientColumns}
            getRowId={(r) => r.id}
            caption="Referral recipients"
            empty="No recipients yet. Add the first one below."
          />
        ),
      }}
    >
      <RecipientForm
        key={loaderData.editing?.id ?? "new"}
        editing={loaderData.editing}
        lastResult={ad?.intent === "save" ? ad.result : null}
      />
      <TimeFrames values={loaderData.timeFrames} lastResult={ad?.intent === "timeframes" ? ad.result : null} />
    </SettingsPage>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Referral recipients · Dioptra" }];
