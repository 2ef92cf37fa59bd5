/** The spectacle and contact-lens forms of the new-order page, and the prescription they are made from. */
import { getFormProps, getTextareaProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { Form, useNavigation } from "react-router";
import type { Route } from "./+types/new";
import { ErrorList, FormField, FormSelect } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Textarea } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";
import { formatMoney } from "~/lib/format";
import { formatRx } from "~/lib/optics";
import { COATINGS, LENS_MATERIALS, LENS_TYPE_LABEL } from "~/lib/orders/states";
import { contactLensOrderSchema, spectacleOrderSchema } from "~/models/orders/order-schema";

export type FormData_ = Exclude<Route.ComponentProps["loaderData"], { step: "patient" }>;

export function RxSummary({ rx }: { rx: NonNullable<FormData_["rx"]> }) {
  return (
    <dl className="grid gap-1 text-sm sm:grid-cols-2">
      {rx.eyes.map((e) => (
        <div key={e.eye}>
          <dt className="inline font-semibold">{e.eye === "right" ? "Right" : "Left"}: </dt>
          <dd className="inline">
            {formatRx(e)}
            {e.addPower ? ` Add +${e.addPower.toFixed(2)}` : ""}
            {e.prismDioptres ? ` · ${e.prismDioptres.toFixed(2)} Δ base ${e.prismBase}` : ""}
          </dd>
        </div>
      ))}
    </dl>
  );
}

/** The form's own errors and any error of a field that has no place of its own on the page (e.g. the prescription). */
export function UnplacedErrors({
  all,
  placed,
  formErrors,
}: {
  all: Record<string, string[]>;
  placed: string[];
  formErrors?: string[];
}) {
  const shown = new Set(placed.filter((p) => !["kind", "prescriptionId", "coatings"].includes(p)));
  const rest = Object.entries(all)
    .filter(([k]) => k !== "" && !shown.has(k))
    .flatMap(([k, v]) => v.map((m) => `${k}: ${m}`));
  const messages = [...(formErrors ?? []), ...rest];
  return messages.length ? (
    <Notice tone="error" title="Not saved">
      {messages.join(" ")}
    </Notice>
  ) : null;
}

export function SpectacleForm({ d, lastResult }: { d: FormData_; lastResult: unknown }) {
  const navigation = useNavigation();
  const [form, fields] = useForm({
    id: "spectacle-order",
    lastResult: navigation.state === "idle" ? (lastResult as never) : null,
    defaultValue: {
      kind: "spectacles",
      prescriptionId: d.rx!.id,
      lensType: d.rx!.eyes.some((e) => e.addPower) ? "varifocal" : "single_vision",
      lensMaterial: LENS_MATERIALS[0],
      coatings: ["Hard coat", "Anti-reflection"],
    },
    onValidate: ({ formData }) => parseWithZod(formData, { schema: spectacleOrderSchema }),
    shouldValidate: "onBlur",
  });
  const coatings = new Set((fields.coatings.initialValue as string[] | undefined) ?? []);
  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      <input type="hidden" name="kind" value="spectacles" />
      <input type="hidden" name="prescriptionId" value={d.rx!.id} />
      <UnplacedErrors all={form.allErrors} placed={Object.keys(fields)} formErrors={form.errors} />
      <Card title="Frame and lab">
        <div className="grid gap-4 sm:grid-cols-2">
          <FormSelect label="Frame from stock" field={fields.frameId}>
            <option value="">Choose a frame…</option>
            {d.frames.map((f) => (
              <option key={f.id} value={f.id}>
                {f.label} — {formatMoney(f.priceMinor, d.currency)} —{" "}
                {f.quantity > 0 ? `${f.quantity} in stock` : "out of stock"}
              </option>
            ))}
          </FormSelect>
          <FormSelect label="Lab" field={fields.labId}>
            <option value="">Choose a lab…</option>
            {d.labs.map((l) => (
              <option key={l.id} value={l.id}>
                {l.name}
              </option>
            ))}
          </FormSelect>
        </div>
      </Card>
      <Card title="Lenses">
        <div className="grid gap-4 sm:grid-cols-2">
          <FormSelect label="Lens type" field={fields.lensType}>
            {Object.entries(LENS_TYPE_LABEL).map(([k, label]) => (
              <option key={k} value={k}>
                {label}
              </option>
            ))}
          </FormSelect>
          <FormSelect label="Material and index" field={fields.lensMaterial}>
            {LENS_MATERIALS.map((m) => (
              <option key={m} value={m}>
                {m}
              </option>
            ))}
          </FormSelect>
          <fieldset>
            <legend className="mb-1 text-sm font-semibold">Coatings</legend>
            <div className="flex flex-wrap gap-x-4 gap-y-1">
              {COATINGS.map((c) => (
                <label key={c} className="flex items-center gap-2 text-sm">
                  <input
                    type="checkbox"
                    name="coatings"
                    value={c}
                    defaultChecked={coatings.has(c)}
                    className="size-4"
                  />
                  {c}
                </label>
              ))}
            </div>
          </fieldset>
          <FormField label="Tint" hint="Leave empty for none, e.g. grey 15 %." field={fields.tint} />
          <FormSelect label="Lens price (fee schedule)" field={fields.lensFeeItemId}>
            <option value="">Choose…</option>
            {d.fees.map((f) => (
              <option key={f.id} value={f.id}>
                {f.label} — {formatMoney(f.priceMinor, d.currency)}
              </option>
            ))}
          </FormSelect>
        </div>
      </Card>
      <Card title="Centration">
        <div className="grid gap-4 sm:grid-cols-4">
          <FormField label="Right monocular PD (mm)" field={fields.pdRightMm} inputMode="decimal" />
          <FormField label="Left monocular PD (mm)" field={fields.pdLeftMm} inputMode="decimal" />
          <FormField
            label="Right fitting height (mm)"
            hint="Needed for bifocal, varifocal and occupational lenses."
            field={fields.heightRightMm}
            inputMode="decimal"
          />
          <FormField label="Left fitting height (mm)" field={fields.heightLeftMm} inputMode="decimal" />
        </div>
        <div className="mt-4">
          <label htmlFor={fields.notes.id} className="mb-1 block text-sm font-semibold">
            Notes for the lab
          </label>
          <Textarea {...getTextareaProps(fields.notes)} rows={2} />
          <ErrorList errors={fields.notes.errors} />
        </div>
      </Card>
      <Button type="submit" pending={navigation.state === "submitting"}>
        Save order
      </Button>
    </Form>
  );
}

export function ContactLensForm({ d, lastResult }: { d: FormData_; lastResult: unknown }) {
  const navigation = useNavigation();
  const [form, fields] = useForm({
    id: "cl-order",
    lastResult: navigation.state === "idle" ? (lastResult as never) : null,
    defaultValue: { kind: "contact_lenses", prescriptionId: d.rx!.id, boxesRight: "1", boxesLeft: "1" },
    onValidate: ({ formData }) => parseWithZod(formData, { schema: contactLensOrderSchema }),
    shouldValidate: "onBlur",
  });
  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      <input type="hidden" name="kind" value="contact_lenses" />
      <input type="hidden" name="prescriptionId" value={d.rx!.id} />
      <UnplacedErrors all={form.allErrors} placed={Object.keys(fields)} formErrors={form.errors} />
      <Card title={`Lens: ${d.rx!.lensName || "as prescribed"}`}>
        <div className="grid gap-4 sm:grid-cols-2">
          <FormSelect label="Supplier" field={fields.labId}>
            <option value="">Choose…</option>
            {d.labs.map((l) => (
              <option key={l.id} value={l.id}>
                {l.name}
              </option>
            ))}
          </FormSelect>
          <FormSelect label="Price per box (fee schedule)" field={fields.lensFeeItemId}>
            <option value="">Choose…</option>
            {d.fees.map((f) => (
              <option key={f.id} value={f.id}>
                {f.label} — {formatMoney(f.priceMinor, d.currency)}
              </option>
            ))}
          </FormSelect>
          <FormField label="Boxes, right eye" field={fields.boxesRight} type="number" />
          <FormField label="Boxes, left eye" field={fields.boxesLeft} type="number" />
        </div>
        <div className="mt-4">
          <label htmlFor={fields.notes.id} className="mb-1 block text-sm font-semibold">
            Notes for the supplier
          </label>
          <Textarea {...getTextareaProps(fields.notes)} rows={2} />
        </div>
      </Card>
      <Button type="submit" pending={navigation.state === "submitting"}>
        Save order
      </Button>
    </Form>
  );
}
