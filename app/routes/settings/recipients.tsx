import { createColumnHelper } from "@tanstack/react-table";
import { parseWithZod } from "@conform-to/zod/v4";
import { asc, desc, eq } from "drizzle-orm";
import { data } from "react-router";
import type { Route } from "./+types/recipients";
import { DataTable } from "~/components/data-table";
import { EditLink, RowIntentButton, SettingsPage } from "~/components/settings-page";
import { StatusBadge } from "~/components/ui/notice";
import { practiceSettings, referralRecipients } from "~/db/schema";
import { DEFAULT_TIME_FRAMES } from "~/lib/referrals";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { redirectWithToast } from "~/utils/toast.server";
import { notFound } from "~/utils/failure.server";
import { RecipientForm, TimeFrames } from "./recipient-forms";
import { DELIVERY, recipientSchema, timeFrameSchema, schema } from "./recipient-schema";

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
  if (!row) notFound("Not found.");
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
