import { parseWithZod } from "@conform-to/zod/v4";
import { createColumnHelper } from "@tanstack/react-table";
import { data, Form } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/labs";
import { ErrorList } from "~/components/forms";
import { DataTable } from "~/components/data-table";
import { ActiveToggle, AddItemForm, SettingsPage, SettingsSection } from "~/components/settings-page";
import { Button } from "~/components/ui/button";
import { Input } from "~/components/ui/input";
import { StatusBadge } from "~/components/ui/notice";
import { requireRole } from "~/utils/auth.server";
import { addLab, labsPage, setLabInUse, setLabOverdueDays } from "~/models/settings/labs.server";
import { redirectWithToast } from "~/utils/toast.server";
import { decimalField } from "~/utils/number-field";

export const labSchema = z.object({
  intent: z.literal("add"),
  name: z.string({ error: "Give the lab's name." }).trim().min(2, "Give the lab's name.").max(120),
  email: z.email({ error: "Give the e-mail address orders go to." }),
  phone: z.string().trim().max(40).default(""),
  accountRef: z.string().trim().max(40).default(""),
});
const activeSchema = z.object({ intent: z.enum(["withdraw", "restore"]), id: z.uuid() });
export const overdueSchema = z.object({
  intent: z.literal("overdue"),
  labOverdueDays: decimalField(
    "Give a number of days.",
    z.number().int("Whole days only.").min(1, "At least 1 day.").max(90, "At most 90 days."),
  ),
});

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  return labsPage();
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const actor = { userId: user.id, request };
  const formData = await request.formData();
  const intent = String(formData.get("intent"));
  const submission = parseWithZod(formData, {
    schema: intent === "add" ? labSchema : intent === "overdue" ? overdueSchema : activeSchema,
  });
  if (submission.status !== "success") return data({ intent, result: submission.reply() }, { status: 400 });
  const v = submission.value;
  if (v.intent === "add") {
    await addLab({ name: v.name, email: v.email, phone: v.phone, accountRef: v.accountRef }, actor);
    return redirectWithToast("/settings/labs", { kind: "success", title: `${v.name} added` });
  }
  if (v.intent === "overdue") {
    await setLabOverdueDays(v.labOverdueDays, actor);
    return redirectWithToast("/settings/labs", {
      kind: "success",
      title: `Orders at the lab over ${v.labOverdueDays} days are reported overdue`,
    });
  }
  const row = await setLabInUse(v.id, v.intent, actor);
  return redirectWithToast("/settings/labs", {
    kind: "success",
    title: v.intent === "withdraw" ? `${row.name} hidden from new orders` : `${row.name} offered again`,
  });
}

type Lab = Awaited<ReturnType<typeof loader>>["labs"][number];
const col = createColumnHelper<Lab>();
const columns = [
  col.accessor("name", {
    header: "Lab",
    cell: ({ row: { original: l } }) => (
      <span className="font-semibold">
        {l.name} {l.active ? null : <StatusBadge tone="warning">Not offered</StatusBadge>}
      </span>
    ),
  }),
  col.accessor("email", {
    header: "Contact",
    cell: ({ row: { original: l } }) => (
      <>
        {l.email}
        {l.phone ? ` · ${l.phone}` : ""}
        {l.accountRef ? ` · account ${l.accountRef}` : ""}
      </>
    ),
  }),
  col.accessor("active", {
    header: "Offered",
    cell: ({ row: { original: l } }) => (
      <ActiveToggle
        id={l.id}
        active={l.active}
        what={l.name}
        withdrawLabel="Stop offering"
        restoreLabel="Offer again"
      />
    ),
  }),
];

export default function LabsSettings({ loaderData, actionData }: Route.ComponentProps) {
  const errors = (actionData?.result.error ?? {}) as Record<string, string[] | undefined>;
  const err = (intent: string, name: string) => (actionData?.intent === intent ? errors[name] : undefined);
  return (
    <SettingsPage
      title="Labs"
      description="Where spectacle and contact-lens orders are sent. The order form goes to the lab's e-mail address."
      form={{
        title: "Add a lab",
        content: (
          <AddItemForm
            idPrefix="lab"
            errors={(name) => err("add", name)}
            submitLabel="Add lab"
            fields={[
              { name: "name", label: "Name" },
              { name: "email", label: "Order e-mail", type: "email" },
              { name: "phone", label: "Phone", type: "tel" },
              { name: "accountRef", label: "Practice's account number with the lab" },
            ]}
          />
        ),
      }}
      list={{
        title: "Labs",
        content: (
          <DataTable
            data={loaderData.labs}
            columns={columns}
            getRowId={(l) => l.id}
            caption="Labs"
            empty="No labs yet."
          />
        ),
      }}
    >
      <SettingsSection title="Overdue at the lab">
        <Form method="post" className="flex flex-wrap items-end gap-3" noValidate>
          <input type="hidden" name="intent" value="overdue" />
          <div>
            <label htmlFor="labOverdueDays" className="mb-1 block text-sm font-semibold">
              Report an order overdue after (days at the lab)
            </label>
            <Input
              id="labOverdueDays"
              name="labOverdueDays"
              type="number"
              defaultValue={loaderData.labOverdueDays}
              className="w-28"
              aria-invalid={err("overdue", "labOverdueDays") ? true : undefined}
              aria-describedby={err("overdue", "labOverdueDays") ? "labOverdueDays-error" : undefined}
            />
            <ErrorList id="labOverdueDays-error" errors={err("overdue", "labOverdueDays")} />
          </div>
          <Button type="submit" variant="secondary">
            Save
          </Button>
        </Form>
      </SettingsSection>
    </SettingsPage>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Labs · Dioptra" }];
