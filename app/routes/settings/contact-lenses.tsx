import { createColumnHelper } from "@tanstack/react-table";
import { data, Form, useNavigation } from "react-router";
import type { Route } from "./+types/contact-lenses";
import { ErrorList } from "~/components/forms";
import { DataTable } from "~/components/data-table";
import { ActiveToggle, SettingsPage } from "~/components/settings-page";
import { Button } from "~/components/ui/button";
import { Input, Select } from "~/components/ui/input";
import { StatusBadge } from "~/components/ui/notice";
import { describePowers, parseCatalogueLens, REPLACEMENTS } from "~/lib/contact-lens/catalogue";
import {
  addCatalogueLens,
  catalogueLenses,
  setCatalogueLensActive,
} from "~/models/prescriptions/contact-lenses.server";
import { isUuid } from "~/models/patients/patient-schema";
import { requireRole } from "~/utils/auth.server";
import { notFound } from "~/utils/failure.server";
import { redirectWithToast } from "~/utils/toast.server";

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  return { lenses: await catalogueLenses() };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const form = Object.fromEntries([...(await request.formData()).entries()].map(([k, v]) => [k, String(v)]));
  if (form.intent === "add") {
    const parsed = parseCatalogueLens(form);
    if (!parsed.ok)
      return data(
        { intent: "add", message: "The lens was not added; check the fields named.", errors: parsed.errors },
        { status: 400 },
      );
    await addCatalogueLens(user, parsed.value, request);
    return redirectWithToast("/settings/contact-lenses", {
      kind: "success",
      title: `${parsed.value.manufacturer} ${parsed.value.name} added to the catalogue`,
    });
  }
  if (form.intent === "withdraw" || form.intent === "restore") {
    if (!isUuid(form.id)) notFound("Not found.");
    const row = await setCatalogueLensActive(user, form.id!, form.intent === "restore", request);
    if (!row) notFound("Not found.");
    return redirectWithToast("/settings/contact-lenses", {
      kind: "success",
      title:
        form.intent === "withdraw"
          ? `${row.manufacturer} ${row.name} withdrawn from new fittings`
          : `${row.manufacturer} ${row.name} offered again`,
    });
  }
  return data({ intent: form.intent ?? "", message: "Unknown action.", errors: {} }, { status: 400 });
}

type Lens = Awaited<ReturnType<typeof loader>>["lenses"][number];
const col = createColumnHelper<Lens>();

const FIELDS: { name: string; label: string; hint?: string; inputMode?: "decimal" }[] = [
  { name: "manufacturer", label: "Manufacturer" },
  { name: "name", label: "Lens name" },
  { name: "material", label: "Material" },
  { name: "baseCurves", label: "Base curves (mm)", hint: "Separate with commas, e.g. 8.4, 8.7" },
  { name: "diameters", label: "Diameters (mm)", hint: "e.g. 14.2" },
  { name: "sphereMin", label: "Lowest sphere (D)", inputMode: "decimal" },
  { name: "sphereMax", label: "Highest sphere (D)", inputMode: "decimal" },
  { name: "sphereStep", label: "Sphere step (D)", inputMode: "decimal", hint: "0.25, 0.50…" },
  { name: "cylinders", label: "Toric cylinders (D)", hint: "Leave blank for a spherical lens; e.g. -0.75, -1.25" },
  { name: "axisStep", label: "Axis step (°), toric only", inputMode: "decimal", hint: "e.g. 10" },
];

export default function ContactLensSettings({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const errors = (actionData?.intent === "add" ? actionData.errors : {}) as Record<string, string[] | undefined>;
  const columns = [
    col.accessor("name", {
      header: "Lens",
      cell: ({ row: { original: l } }) => (
        <>
          <span className="font-semibold">
            {l.manufacturer} {l.name}
          </span>
          <br />
          {l.material} · {REPLACEMENTS[l.replacement]}
        </>
      ),
    }),
    col.accessor("baseCurvesMm", {
      header: "Base curves and diameters",
      cell: ({ row: { original: l } }) =>
        `BC ${l.baseCurvesMm.map((b) => b.toFixed(2)).join(", ")} mm; dia. ${l.diametersMm.map((d) => d.toFixed(1)).join(", ")} mm`,
    }),
    col.accessor("sphereStep", { header: "Powers made", cell: ({ row: { original: l } }) => describePowers(l) }),
    col.accessor("active", {
      header: "Offered",
      cell: ({ row: { original: l } }) => (
        <>
          {l.active ? null : <StatusBadge tone="warning">Withdrawn</StatusBadge>}
          <ActiveToggle
            id={l.id}
            active={l.active}
            what={`${l.manufacturer} ${l.name}`}
            withdrawLabel="Withdraw"
            restoreLabel="Offer again"
          />
        </>
      ),
    }),
  ];
  return (
    <SettingsPage
      title="Contact lenses"
      description="The lenses the practice fits. A contact-lens prescription names one of these, with a base curve, diameter and powers it is made in."
      notice={actionData?.message ? { tone: "error", title: actionData.message } : null}
      form={{
        title: "Add a lens",
        content: (
          <Form method="post" className="grid gap-4 sm:grid-cols-3" noValidate>
            <input type="hidden" name="intent" value="add" />
            {FIELDS.map((f) => {
              const id = `lens-${f.name}`;
              const errs = errors[f.name];
              const described = [errs?.length ? `${id}-error` : "", f.hint ? `${id}-hint` : ""].filter(Boolean);
              return (
                <div key={f.name}>
                  <label htmlFor={id} className="mb-1 block text-sm font-semibold">
                    {f.label}
                  </label>
                  <Input
                    id={id}
                    name={f.name}
                    inputMode={f.inputMode}
                    aria-invalid={errs?.length ? true : undefined}
                    aria-describedby={described.length ? described.join(" ") : undefined}
                  />
                  {f.hint ? (
                    <p id={`${id}-hint`} className="mt-1 text-sm text-muted">
                      {f.hint}
                    </p>
                  ) : null}
                  <ErrorList id={`${id}-error`} errors={errs} />
                </div>
              );
            })}
            <div>
              <label htmlFor="lens-replacement" className="mb-1 block text-sm font-semibold">
                Replacement
              </label>
              <Select
                id="lens-replacement"
                name="replacement"
                defaultValue=""
                aria-invalid={errors.replacement?.length ? true : undefined}
                aria-describedby={errors.replacement?.length ? "lens-replacement-error" : undefined}
              >
                <option value="">Choose…</option>
                {Object.entries(REPLACEMENTS).map(([k, v]) => (
                  <option key={k} value={k}>
                    {v}
                  </option>
                ))}
              </Select>
              <ErrorList id="lens-replacement-error" errors={errors.replacement} />
            </div>
            <div className="sm:col-span-3">
              <Button
                type="submit"
                pending={navigation.state === "submitting" && navigation.formData?.get("intent") === "add"}
              >
                Add lens
              </Button>
            </div>
          </Form>
        ),
      }}
      list={{
        title: "Catalogue",
        content: (
          <DataTable
            data={loaderData.lenses}
            columns={columns}
            getRowId={(l) => l.id}
            caption="Contact lenses in the catalogue"
            empty="No lenses yet."
          />
        ),
      }}
    />
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Contact lenses · Dioptra" }];
