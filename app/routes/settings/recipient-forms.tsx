/** The recipient and time-frame forms of the referral-recipients settings page. */
import { getFormProps, getTextareaProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { Form, Link, useNavigation } from "react-router";
import type { Route } from "./+types/recipients";
import { ErrorList, FormField, FormSelect } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Textarea } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { URGENCY_LABEL } from "~/lib/referrals";
import { DELIVERY, recipientSchema, timeFrameSchema } from "./recipient-schema";

export function RecipientForm({
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
        <FormField label="Name" hint="The ophthalmologist, or the clinic's referral desk." field={fields.name} />
        <FormField label="Clinic or hospital" field={fields.clinic} />
        <FormField
          label="Specialty"
          hint="For example glaucoma, medical retina, neuro-ophthalmology."
          field={fields.specialty}
        />
        <FormSelect label="Prefers to receive letters by" field={fields.preferredDelivery}>
          {Object.entries(DELIVERY).map(([k, label]) => (
            <option key={k} value={k}>
              {label}
            </option>
          ))}
        </FormSelect>
        <FormField label="E-mail" field={fields.email} type="email" />
        <FormField label="Phone" field={fields.phone} type="tel" />
        <FormField label="Address" field={fields.addressLine1} />
        <FormField label="Address (second line)" field={fields.addressLine2} />
        <FormField label="Town or city" field={fields.city} />
        <FormField label="Postcode" field={fields.postcode} />
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

export function TimeFrames({
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
          <FormField key={name} label={`${label} (days)`} field={fields[name]} type="number" />
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
