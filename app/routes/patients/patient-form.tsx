import { getFormProps, getInputProps, getTextareaProps, useForm, type SubmissionResult } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { Form, useNavigation } from "react-router";
import { ErrorList, FormField, FormSelect } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Textarea } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import type { z } from "zod";
import { DuplicateWarning, type Duplicate } from "~/components/patients/duplicate-warning";
import { GUARDIAN_UNDER_AGE, patientSchema } from "~/models/patients/patient-schema";

export type PatientActionData = (SubmissionResult<string[]> & { duplicates?: Duplicate[] }) | undefined;

/** Registration and demographics; clinical fields only for clinical roles. */
export function PatientForm({
  id,
  defaultValue,
  lastResult,
  clinical,
  submitLabel,
}: {
  id: string;
  defaultValue?: Record<string, unknown>;
  lastResult: PatientActionData;
  clinical: boolean;
  submitLabel: string;
}) {
  const navigation = useNavigation();
  const [form, fields] = useForm<z.input<typeof patientSchema>>({
    id,
    lastResult,
    defaultValue: defaultValue as never,
    onValidate: ({ formData }) => parseWithZod(formData, { schema: patientSchema }),
    shouldValidate: "onBlur",
    shouldRevalidate: "onInput",
  });
  const duplicates = lastResult?.duplicates ?? [];
  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      {duplicates.length ? (
        <DuplicateWarning
          duplicates={duplicates}
          confirm={
            <label className="mt-3 flex items-center gap-2 font-semibold">
              <input type="checkbox" name="confirmDuplicate" value="yes" className="size-4" />
              This is a different person: save anyway
            </label>
          }
        />
      ) : form.errors?.length ? (
        <Notice tone="error" title="Not saved">
          {form.errors.join(" ")}
        </Notice>
      ) : null}
      <Card title="Identity">
        <div className="grid gap-4 sm:grid-cols-2">
          <FormField label="First name" field={fields.firstName} autoComplete="off" />
          <FormField label="Last name" field={fields.lastName} autoComplete="off" />
          <FormField label="Date of birth" field={fields.dateOfBirth} type="date" />
          <FormSelect label="Sex" field={fields.sex}>
            <option value="unknown">Not recorded</option>
            <option value="female">Female</option>
            <option value="male">Male</option>
            <option value="other">Other</option>
          </FormSelect>
        </div>
      </Card>
      <Card title="Contact">
        <div className="grid gap-4 sm:grid-cols-2">
          <FormField label="E-mail" field={fields.email} type="email" />
          <FormField label="Phone" field={fields.phone} type="tel" />
          <FormField label="Address" field={fields.addressLine1} />
          <FormField label="Town or city" field={fields.city} />
          <FormField label="Postcode" field={fields.postcode} />
          <label className="flex items-center gap-2 self-end pb-2 text-sm font-semibold">
            <input {...getInputProps(fields.remindersByEmail, { type: "checkbox" })} className="size-4" />
            Send reminders by e-mail
          </label>
        </div>
      </Card>
      <Card title="Parent or guardian">
        <p className="mb-3 text-sm text-muted">
          Required for a patient under {GUARDIAN_UNDER_AGE}: their name, how they are related, and a phone number or
          e-mail address. Optional for older patients.
        </p>
        <div className="grid gap-4 sm:grid-cols-2">
          <FormField label="Guardian's name" field={fields.guardianName} autoComplete="off" />
          <FormField
            label="Relationship to the patient"
            field={fields.guardianRelationship}
            hint="For example mother, father, grandparent, legal guardian."
            autoComplete="off"
          />
          <FormField label="Guardian's phone" field={fields.guardianPhone} type="tel" autoComplete="off" />
          <FormField label="Guardian's e-mail" field={fields.guardianEmail} type="email" autoComplete="off" />
        </div>
      </Card>
      <Card title="General practitioner (GP)">
        <div className="grid gap-4 sm:grid-cols-2">
          <FormField label="GP's name" field={fields.gpName} autoComplete="off" />
          <FormField label="GP practice" field={fields.gpPractice} autoComplete="off" />
          <FormField label="GP practice address" field={fields.gpAddress} autoComplete="off" />
          <FormField label="GP practice contact number" field={fields.gpPhone} type="tel" autoComplete="off" />
        </div>
      </Card>
      {clinical ? (
        <Card title="Allergies and medications">
          <div className="grid gap-4 sm:grid-cols-2">
            <div>
              <label htmlFor={fields.allergies.id} className="mb-1 block text-sm font-semibold">
                Allergies
              </label>
              <Textarea {...getTextareaProps(fields.allergies)} rows={3} />
              <ErrorList errors={fields.allergies.errors} />
              <label className="mt-2 flex items-center gap-2 text-sm font-semibold">
                <input
                  {...getInputProps(fields.noKnownAllergies, { type: "checkbox" })}
                  className="size-4"
                  aria-invalid={fields.noKnownAllergies.errors?.length ? true : undefined}
                  aria-describedby={
                    fields.noKnownAllergies.errors?.length ? `${fields.noKnownAllergies.id}-error` : undefined
                  }
                />
                No known allergies (asked and recorded)
              </label>
              <ErrorList id={`${fields.noKnownAllergies.id}-error`} errors={fields.noKnownAllergies.errors} />
            </div>
            <div>
              <label htmlFor={fields.medications.id} className="mb-1 block text-sm font-semibold">
                Current medications
              </label>
              <Textarea {...getTextareaProps(fields.medications)} rows={3} />
              <ErrorList errors={fields.medications.errors} />
            </div>
          </div>
        </Card>
      ) : null}
      <Button type="submit" pending={navigation.state === "submitting"}>
        {submitLabel}
      </Button>
    </Form>
  );
}
