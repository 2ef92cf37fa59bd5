import { getFormProps, getInputProps, getSelectProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { createColumnHelper } from "@tanstack/react-table";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/fees";
import { Field, SelectField } from "~/components/forms";
import { DataTable } from "~/components/data-table";
import { EditLink, RowIntentButton, SettingsPage } from "~/components/settings-page";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { formatMoney } from "~/lib/format";
import { formatRate, minorToDecimal, parseMoney } from "~/lib/money";
import { requireRole } from "~/utils/auth.server";
import { feeCodeTaken, feeSchedulePage, saveFee, setFeeInUse, setTaxRate } from "~/models/settings/fees.server";
import { practiceCurrency } from "~/models/settings/audited.server";
import { redirectWithToast } from "~/utils/toast.server";
import { decimalField } from "~/utils/number-field";

const feeSchema = z.object({
  intent: z.literal("save"),
  id: z.uuid().optional(),
  code: z
    .string({ error: "Give a code." })
    .trim()
    .min(1, "Give a code.")
    .max(20, "At most 20 characters.")
    .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, "Letters, digits, dot, dash or underscore; no spaces."),
  description: z
    .string({ error: "Describe the service or item." })
    .trim()
    .min(2, "Describe the service or item.")
    .max(120),
  price: z.string({ error: "Give a price." }).trim().min(1, "Give a price."),
  kind: z.enum(["service", "item"], { error: "Choose service or item." }),
  taxCategory: z.enum(["standard", "exempt"], { error: "Choose how it is taxed." }),
});
const toggleSchema = z.object({ intent: z.enum(["withdraw", "restore"]), id: z.uuid() });
const taxSchema = z.object({
  intent: z.literal("tax"),
  taxRate: decimalField(
    "Give a rate in per cent, e.g. 20 or 0.",
    z.number().min(0, "At least 0 %.").max(100, "At most 100 %."),
  ),
});
const schema = z.discriminatedUnion("intent", [feeSchema, toggleSchema, taxSchema]);

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  return feeSchedulePage(new URL(request.url).searchParams.get("edit"));
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const actor = { userId: user.id, request };
  const currency = await practiceCurrency();
  const submission = parseWithZod(await request.formData(), {
    schema: schema.superRefine((v, ctx) => {
      if (v.intent === "save" && parseMoney(v.price, currency) === null)
        ctx.addIssue({
          code: "custom",
          path: ["price"],
          message: `Give the price in ${currency}, e.g. 65 or 65.00 (no more than two decimals).`,
        });
      if (v.intent === "tax" && Math.round(v.taxRate * 100) !== v.taxRate * 100)
        ctx.addIssue({ code: "custom", path: ["taxRate"], message: "At most two decimals, e.g. 17.5." });
    }),
  });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  const v = submission.value;
  if (v.intent === "tax") {
    const taxRateBp = Math.round(v.taxRate * 100);
    await setTaxRate(taxRateBp, actor);
    return redirectWithToast("/settings/fees", { kind: "success", title: `Tax rate set to ${formatRate(taxRateBp)}` });
  }
  if (v.intent === "save") {
    const values = {
      code: v.code.toUpperCase(),
      description: v.description,
      priceMinor: parseMoney(v.price, currency)!,
      kind: v.kind,
      taxCategory: v.taxCategory,
    };
    if (await feeCodeTaken(values.code, v.id))
      return data(
        submission.reply({ fieldErrors: { code: [`The code ${values.code} is already in the fee schedule.`] } }),
        { status: 400 },
      );
    await saveFee(v.id, values, actor);
    return redirectWithToast("/settings/fees", { kind: "success", title: `${values.code} saved` });
  }
  await setFeeInUse(v.id, v.intent === "restore", actor);
  return redirectWithToast("/settings/fees", {
    kind: "success",
    title: v.intent === "restore" ? "Fee restored" : "Fee withdrawn: it can no longer be added to invoices",
  });
}

type Fee = Awaited<ReturnType<typeof loader>>["fees"][number];
const col = createColumnHelper<Fee>();
const feeColumns = (currency: string) => [
  col.accessor("code", { header: "Code", meta: { className: "font-mono font-semibold" } }),
  col.accessor("description", { header: "Description" }),
  col.accessor("kind", { header: "Kind", cell: (c) => (c.getValue() === "service" ? "Service" : "Item") }),
  col.accessor("taxCategory", {
    header: "Tax",
    cell: (c) => (c.getValue() === "standard" ? "Standard rate" : "Exempt"),
  }),
  col.accessor("priceMinor", {
    header: "Price",
    meta: { align: "right" },
    cell: (c) => formatMoney(c.getValue(), currency),
  }),
  col.accessor("active", {
    header: "Status",
    cell: (c) =>
      c.getValue() ? (
        <StatusBadge tone="success">In use</StatusBadge>
      ) : (
        <StatusBadge tone="warning">Withdrawn</StatusBadge>
      ),
  }),
  col.display({
    id: "actions",
    header: () => <span className="sr-only">Actions</span>,
    cell: ({ row: { original: f } }) => (
      <div className="flex gap-2">
        <EditLink id={f.id} what={f.code} />
        <RowIntentButton
          id={f.id}
          intent={f.active ? "withdraw" : "restore"}
          label={f.active ? "Withdraw" : "Restore"}
          what={f.code}
        />
      </div>
    ),
  }),
];

export default function FeeSchedule({ loaderData, actionData }: Route.ComponentProps) {
  const { fees, currency, editing, taxRateBp } = loaderData;
  const navigation = useNavigation();
  const intent = navigation.formData?.get("intent");
  const last = navigation.state === "idle" ? actionData : null;
  const [form, fields] = useForm({
    id: editing ? `fee-${editing.id}` : "fee-new",
    lastResult: last && (last as { initialValue?: { intent?: string } }).initialValue?.intent === "save" ? last : null,
    defaultValue: editing
      ? {
          code: editing.code,
          description: editing.description,
          price: minorToDecimal(editing.priceMinor, currency),
          kind: editing.kind,
          taxCategory: editing.taxCategory,
        }
      : { kind: "service", taxCategory: "exempt" },
    // Validated on the server only: the price needs the practice's currency.
  });
  const [taxForm, taxFields] = useForm({
    id: "tax",
    lastResult: last && (last as { initialValue?: { intent?: string } }).initialValue?.intent === "tax" ? last : null,
    defaultValue: { taxRate: String(taxRateBp / 100) },
  });
  return (
    <SettingsPage
      title="Fee schedule"
      description={`Codes, descriptions and prices used on invoices. Prices are before tax, in ${currency}.`}
      list={{
        title: "Fees",
        content: (
          <DataTable
            data={fees}
            columns={feeColumns(currency)}
            getRowId={(f) => f.id}
            caption="Fees"
            empty="No fees yet. Add the first one below."
          />
        ),
      }}
    >
      <div className="grid gap-6 lg:grid-cols-[2fr_1fr]">
        <Card title={editing ? `Edit ${editing.code}` : "Add a fee"}>
          <Form method="post" {...getFormProps(form)} className="grid gap-4 sm:grid-cols-2" key={editing?.id ?? "new"}>
            {form.errors?.length ? (
              <div className="sm:col-span-2">
                <Notice tone="error" title="Not saved">
                  {form.errors.join(" ")}
                </Notice>
              </div>
            ) : null}
            <input type="hidden" name="intent" value="save" />
            {editing ? <input type="hidden" name="id" value={editing.id} /> : null}
            <Field
              label="Code"
              hint="Your own code or a procedure code."
              errors={fields.code.errors}
              inputProps={getInputProps(fields.code, { type: "text" })}
            />
            <Field
              label={`Price (${currency}, before tax)`}
              errors={fields.price.errors}
              inputProps={{ ...getInputProps(fields.price, { type: "text" }), inputMode: "decimal" }}
            />
            <div className="sm:col-span-2">
              <Field
                label="Description"
                errors={fields.description.errors}
                inputProps={getInputProps(fields.description, { type: "text" })}
              />
            </div>
            <SelectField label="Kind" errors={fields.kind.errors} selectProps={getSelectProps(fields.kind)}>
              <option value="service">Service (exam, fitting, consultation)</option>
              <option value="item">Item (frames, lenses, solutions)</option>
            </SelectField>
            <SelectField
              label="Tax"
              errors={fields.taxCategory.errors}
              selectProps={getSelectProps(fields.taxCategory)}
            >
              <option value="exempt">Exempt (no tax)</option>
              <option value="standard">Standard rate</option>
            </SelectField>
            <div className="flex gap-3 sm:col-span-2">
              <Button type="submit" pending={navigation.state === "submitting" && intent === "save"}>
                {editing ? "Save changes" : "Add fee"}
              </Button>
              {editing ? (
                <Link
                  to="/settings/fees"
                  className="self-center font-semibold text-accent-700 underline underline-offset-4"
                >
                  Cancel
                </Link>
              ) : null}
            </div>
          </Form>
        </Card>
        <Card title="Tax rate">
          <Form method="post" {...getFormProps(taxForm)} className="space-y-4">
            <input type="hidden" name="intent" value="tax" />
            <Field
              label="Rate on standard-rated lines (%)"
              hint="Applied to drafts and newly issued invoices; issued invoices keep theirs. In the UK, eye examinations are usually exempt and dispensed goods standard-rated (common practice); local tax law governs."
              errors={taxFields.taxRate.errors}
              inputProps={{ ...getInputProps(taxFields.taxRate, { type: "text" }), inputMode: "decimal" }}
            />
            <Button type="submit" variant="secondary" pending={navigation.state === "submitting" && intent === "tax"}>
              Save tax rate
            </Button>
          </Form>
        </Card>
      </div>
    </SettingsPage>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Fee schedule · Dioptra" }];
