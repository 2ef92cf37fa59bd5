import { getFormProps, getInputProps, getSelectProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/practice";
import { Field, SelectField } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { SettingsPage, SettingsSection } from "~/components/settings-page";
import { ACUITY_NOTATION_LABEL, ACUITY_NOTATIONS } from "~/lib/optics/acuity";
import { JURISDICTIONS } from "~/lib/optics/jurisdiction";
import { requireRole } from "~/utils/auth.server";
import { practiceDetailsPage, savePracticeDetails } from "~/models/settings/practice.server";
import { redirectWithToast } from "~/utils/toast.server";
import { decimalField } from "~/utils/number-field";

const timeZoneSchema = z.string().refine((tz) => {
  try {
    new Intl.DateTimeFormat("en-GB", { timeZone: tz });
    return true;
  } catch {
    return false;
  }
}, "Use an IANA time zone such as Europe/London or America/Chicago.");

export const practiceSchema = z.object({
  name: z.string({ error: "Give the practice's name." }).trim().min(2, "Give the practice's name.").max(120),
  addressLine1: z.string().trim().max(200).default(""),
  addressLine2: z.string().trim().max(200).default(""),
  city: z.string().trim().max(100).default(""),
  postcode: z.string().trim().max(20).default(""),
  phone: z.string().trim().max(40).default(""),
  email: z.union([z.literal(""), z.email({ error: "Enter a valid e-mail address." })]).default(""),
  timeZone: timeZoneSchema,
  currency: z
    .string()
    .trim()
    .toUpperCase()
    .regex(/^[A-Z]{3}$/, "Use a three-letter ISO 4217 code such as GBP, EUR or USD."),
  jurisdiction: z.enum(["uk", "us"], { error: "Choose where the practice works." }),
  acuityNotation: z.enum(ACUITY_NOTATIONS, {
    error: "Choose how the practice writes acuity: metric Snellen, feet, decimal or logMAR.",
  }),
  spectacleRxValidityMonths: decimalField(
    "Give a number of months.",
    z.number().int("Whole months only.").min(1, "At least 1 month.").max(120, "At most 120 months."),
  ),
  contactLensRxValidityMonths: decimalField(
    "Give a number of months.",
    z.number().int("Whole months only.").min(1, "At least 1 month.").max(120, "At most 120 months."),
  ),
  portalCancelCutoffHours: decimalField(
    "Give a number of hours.",
    z.number().int("Whole hours only.").min(0, "Zero or more hours.").max(336, "At most 336 hours (two weeks)."),
  ),
  portalBookingDays: decimalField(
    "Give a number of days.",
    z.number().int("Whole days only.").min(1, "At least 1 day.").max(365, "At most 365 days (a year)."),
  ),
  staffBookingDays: decimalField(
    "Give a number of days.",
    z.number().int("Whole days only.").min(1, "At least 1 day.").max(3660, "At most 3660 days (ten years)."),
  ),
});

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  const page = await practiceDetailsPage();
  if (!page) throw data({ error: "Practice settings are missing; run the seed." }, { status: 500 });
  return page;
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const submission = parseWithZod(await request.formData(), { schema: practiceSchema });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  await savePracticeDetails(submission.value, { userId: user.id, request });
  return redirectWithToast("/settings", { kind: "success", title: "Practice details saved" });
}

type FieldName = keyof z.infer<typeof practiceSchema>;

/** The letterhead's text fields, in the order they are shown. */
const LETTERHEAD: { name: FieldName; label: string; type: "text" | "tel" | "email" }[] = [
  { name: "name", label: "Practice name", type: "text" },
  { name: "phone", label: "Phone", type: "tel" },
  { name: "addressLine1", label: "Address", type: "text" },
  { name: "addressLine2", label: "Address (second line)", type: "text" },
  { name: "city", label: "Town or city", type: "text" },
  { name: "postcode", label: "Postcode", type: "text" },
  { name: "email", label: "Practice e-mail", type: "email" },
];

const LOCAL_LAW = "Local law and licensed practice govern this period.";

/** The policies given as whole numbers: one labelled number field each. */
const NUMBER_POLICIES: { name: FieldName; label: string; hint: string }[] = [
  { name: "spectacleRxValidityMonths", label: "Spectacle prescription valid for (months)", hint: LOCAL_LAW },
  { name: "contactLensRxValidityMonths", label: "Contact-lens prescription valid for (months)", hint: LOCAL_LAW },
  {
    name: "portalCancelCutoffHours",
    label: "Patients may cancel online until (hours before the visit)",
    hint: "After this, the patient portal asks them to phone.",
  },
  {
    name: "portalBookingDays",
    label: "Patients may book online up to (days ahead)",
    hint: "From 1 to 365 days. The portal offers times within this many days.",
  },
  {
    name: "staffBookingDays",
    label: "The practice team may book up to (days ahead)",
    hint: "From 1 to 3660 days; two years covers the longest usual recall.",
  },
];

/** One of the form's fields: its label, hint and errors wired to the conform field of that name. */
function PracticeField({
  meta,
  label,
  hint,
  type,
}: {
  meta: Parameters<typeof getInputProps>[0];
  label: string;
  hint?: string;
  type: "text" | "tel" | "email" | "number";
}) {
  return <Field label={label} hint={hint} errors={meta.errors} inputProps={getInputProps(meta, { type })} />;
}

export default function PracticeSettings({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const [form, fields] = useForm({
    id: "practice",
    lastResult: actionData,
    defaultValue: loaderData.values,
    onValidate: ({ formData }) => parseWithZod(formData, { schema: practiceSchema }),
    shouldValidate: "onBlur",
  });
  return (
    <SettingsPage
      title="Practice details"
      description="Shown on prescriptions, letters and invoices."
      notice={form.errors?.length ? { tone: "error", title: "Not saved", body: form.errors.join(" ") } : null}
    >
      <Form method="post" {...getFormProps(form)} className="space-y-6">
        <SettingsSection title="Letterhead">
          <div className="grid gap-4 sm:grid-cols-2">
            {LETTERHEAD.map((f) => (
              <PracticeField key={f.name} meta={fields[f.name]} label={f.label} type={f.type} />
            ))}
          </div>
        </SettingsSection>
        <SettingsSection title="Policies">
          <div className="grid gap-4 sm:grid-cols-2">
            <PracticeField meta={fields.timeZone} label="Time zone" hint="IANA name, e.g. Europe/London." type="text" />
            <PracticeField meta={fields.currency} label="Currency" hint="ISO 4217 code." type="text" />
            <div>
              <SelectField
                label="Jurisdiction"
                errors={fields.jurisdiction.errors}
                selectProps={getSelectProps(fields.jurisdiction)}
              >
                {Object.entries(JURISDICTIONS).map(([code, j]) => (
                  <option key={code} value={code}>
                    {j.label}
                  </option>
                ))}
              </SelectField>
              <p className="mt-1 text-sm text-muted">
                Chooses the dispensing standard spectacles are checked against (
                {Object.values(JURISDICTIONS)
                  .map((j) => `${j.label}: ${j.dispensingStandard}`)
                  .join("; ")}
                ), the registration wording on prescriptions and the default acuity notation. Local law governs.
              </p>
            </div>
            <div>
              <SelectField
                label="Acuity notation"
                errors={fields.acuityNotation.errors}
                selectProps={getSelectProps(fields.acuityNotation)}
              >
                {ACUITY_NOTATIONS.map((n) => (
                  <option key={n} value={n}>
                    {ACUITY_NOTATION_LABEL[n]}
                  </option>
                ))}
              </SelectField>
              <p className="mt-1 text-sm text-muted">
                How a bare number typed as acuity in an exam is read (the exam can state another notation per entry).
                Entries that cannot be read unambiguously in it are refused, and each entry echoes what it read before
                saving.
              </p>
            </div>
            {NUMBER_POLICIES.map((f) => (
              <PracticeField key={f.name} meta={fields[f.name]} label={f.label} hint={f.hint} type="number" />
            ))}
          </div>
        </SettingsSection>
        <Button type="submit" pending={navigation.state === "submitting"}>
          Save practice details
        </Button>
      </Form>
    </SettingsPage>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Practice details · Dioptra" }];
