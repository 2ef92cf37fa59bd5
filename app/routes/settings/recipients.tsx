import { createColumnHelper } from "@tanstack/react-table";
import { parseWithZod } from "@conform-to/zod/v4";
import { data } from "react-router";
import type { Route } from "./+types/recipients";
import { DataTable } from "~/components/data-table";
import { EditLink, RowIntentButton, SettingsPage } from "~/components/settings-page";
import { StatusBadge } from "~/components/ui/notice";
import { requireRole } from "~/utils/auth.server";
import { redirectWithToast } from "~/utils/toast.server";
import {
  recipientsPage,
  saveRecipient,
  setRecipientInUse,
  setReferralTimeFrames,
} from "~/models/settings/recipients.server";
import { RecipientForm, TimeFrames } from "./recipient-forms";
import { DELIVERY, recipientSchema, timeFrameSchema, schema } from "./recipient-schema";

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  return recipientsPage(new URL(request.url).searchParams.get("edit"));
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
  const actor = { userId: user.id, request };
  if (v.intent === "timeframes") {
    const { intent: _i, ...values } = v;
    await setReferralTimeFrames(values, actor);
    return redirectWithToast("/settings/recipients", { kind: "success", title: "Referral time frames saved" });
  }
  if (v.intent === "save") {
    const { intent: _i, id, ...values } = v;
    if (!(await saveRecipient(id, values, actor)))
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
  const row = await setRecipientInUse(v.id, active, actor);
  return redirectWithToast("/settings/recipients", {
    kind: "success",
    title: active ? `${row.name} can receive referrals again` : `${row.name} hidden from new referrals`,
  });
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
