import { parseWithZod } from "@conform-to/zod/v4";
import { createColumnHelper } from "@tanstack/react-table";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/closures";
import { DataTable } from "~/components/data-table";
import { Field, SelectField } from "~/components/forms";
import { RowIntentButton, SettingsPage, SettingsSection } from "~/components/settings-page";
import { Button } from "~/components/ui/button";
import { StatusBadge } from "~/components/ui/notice";
import { isCalendarDate } from "~/lib/dates/calendar-date";
import { CLOSURE_KIND_LABEL, closureDates } from "~/lib/scheduling/closures";
import { localParts } from "~/lib/scheduling/time";
import { requireRole } from "~/utils/auth.server";
import { DomainError } from "~/utils/failure.server";
import { redirectWithToast } from "~/utils/toast.server";
import { addClosure, listClosures, openingHoursBySite, removeClosure } from "~/models/schedule/closures.server";
import { bookableProviders, practiceSchedule } from "~/models/schedule/schedule.server";

const day = (what: string) =>
  z.string({ error: `Give the ${what} as a date.` }).refine(isCalendarDate, `Give the ${what} as a real date.`);

export const closureSchema = z
  .object({
    intent: z.literal("add"),
    kind: z.enum(["bank_holiday", "practice", "leave"], { error: "Choose what kind of closure this is." }),
    siteId: z.union([z.literal(""), z.uuid({ error: "Choose one of the sites." })]).default(""),
    providerId: z.union([z.literal(""), z.uuid({ error: "Choose one of the clinicians." })]).default(""),
    startsOn: day("first day"),
    endsOn: day("last day").optional(),
    reason: z
      .string({ error: "Say why, e.g. Christmas Day or Annual leave." })
      .trim()
      .min(2, "Say why, e.g. Christmas Day or Annual leave.")
      .max(120, "At most 120 characters."),
  })
  .superRefine((v, ctx) => {
    if (v.kind === "leave" && !v.providerId)
      ctx.addIssue({ code: "custom", path: ["providerId"], message: "Choose the clinician who is on leave." });
    if (v.endsOn && v.endsOn < v.startsOn)
      ctx.addIssue({ code: "custom", path: ["endsOn"], message: "The last day must be on or after the first day." });
  });
const removeSchema = z.object({ intent: z.literal("remove"), id: z.uuid() });

/** Settings → Opening and closures: the sites' opening hours at a glance, bank holidays, closures and leave (owner only). */
export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  const { timeZone } = await practiceSchedule();
  const today = localParts(new Date(), timeZone).date;
  const [closures, sites, providers] = await Promise.all([
    listClosures(today),
    openingHoursBySite(),
    bookableProviders(),
  ]);
  return { closures, sites, providers: providers.map(({ id, name }) => ({ id, name })), today };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const formData = await request.formData();
  const intent = String(formData.get("intent"));
  const submission = parseWithZod(formData, { schema: intent === "remove" ? removeSchema : closureSchema });
  if (submission.status !== "success") return data({ intent, result: submission.reply() }, { status: 400 });
  const v = submission.value;
  try {
    if (v.intent === "remove") {
      const row = await removeClosure(user, v.id, request);
      return redirectWithToast("/settings/closures", {
        kind: "success",
        title: `${row.reason} removed`,
        description: "Those days can be booked again.",
      });
    }
    const { timeZone } = await practiceSchedule();
    const { closure, affected } = await addClosure(
      user,
      {
        kind: v.kind,
        siteId: v.siteId || null,
        providerId: v.providerId || null,
        startsOn: v.startsOn,
        endsOn: v.endsOn ?? v.startsOn,
        reason: v.reason,
      },
      timeZone,
      request,
    );
    return redirectWithToast("/settings/closures", {
      kind: affected ? "warning" : "success",
      title: `${closure.reason} added: no bookings ${closureDates(closure)}`,
      description: affected
        ? `${affected} booked appointment${affected === 1 ? " is" : "s are"} already inside it and kept; move ${affected === 1 ? "it" : "them"} from the calendar.`
        : undefined,
    });
  } catch (error) {
    if (!(error instanceof DomainError)) throw error;
    const fieldErrors = Object.keys(error.fieldErrors).length ? error.fieldErrors : { "": [error.message] };
    return data(
      { intent, result: submission.reply({ fieldErrors, formErrors: [error.message] }) },
      { status: error.status },
    );
  }
}

type Row = Awaited<ReturnType<typeof loader>>["closures"][number];
const col = createColumnHelper<Row>();
const columns = [
  col.accessor("startsOn", { header: "When", cell: ({ row: { original: c } }) => closureDates(c).replace(/^on /, "") }),
  col.accessor("reason", {
    header: "Why",
    cell: ({ row: { original: c } }) => (
      <>
        <StatusBadge tone={c.kind === "leave" ? "info" : "warning"}>{CLOSURE_KIND_LABEL[c.kind]}</StatusBadge>{" "}
        {c.reason}
      </>
    ),
  }),
  col.accessor("siteName", {
    header: "Applies to",
    cell: ({ row: { original: c } }) => c.providerName ?? c.siteName ?? "Every site",
  }),
  col.display({
    id: "remove",
    header: "Remove",
    cell: ({ row: { original: c } }) => (
      <RowIntentButton
        id={c.id}
        intent="remove"
        label="Remove"
        what={`${c.reason} ${closureDates(c)}`}
        variant="ghost"
      />
    ),
  }),
];

type WeekDay = Route.ComponentProps["loaderData"]["sites"][number]["days"][number];
const weekCol = createColumnHelper<WeekDay>();
/** A site's week at a glance; a day without hours is closed, or not set when the site has no hours at all. */
const siteWeekColumns = (unset: string) => [
  weekCol.accessor("name", { header: "Day", meta: { rowHeader: true } }),
  weekCol.accessor("hours", { header: "Hours", cell: ({ row: { original: d } }) => d.hours || unset }),
];
const weekColumns = siteWeekColumns("Closed");
const unsetWeekColumns = siteWeekColumns("Not set");

/** A choice among sites or clinicians, with a first option for none. */
function ChoiceField(f: {
  name: string;
  label: string;
  none: string;
  options: { id: string; name: string }[];
  errors: Record<string, string[] | undefined>;
  defaults: Record<string, string | undefined>;
}) {
  return (
    <SelectField
      label={f.label}
      errors={f.errors[f.name]}
      selectProps={{ id: `closure-${f.name}`, name: f.name, defaultValue: f.defaults[f.name] ?? "" }}
    >
      <option value="">{f.none}</option>
      {f.options.map((o) => (
        <option key={o.id} value={o.id}>
          {o.name}
        </option>
      ))}
    </SelectField>
  );
}

export default function ClosuresSettings({ loaderData, actionData }: Route.ComponentProps) {
  const { closures, sites, providers, today } = loaderData;
  const navigation = useNavigation();
  const failed = actionData?.intent === "add" ? actionData.result : undefined;
  const errors = (failed?.error ?? {}) as Record<string, string[] | undefined>;
  const defaults = (failed?.initialValue ?? {}) as Record<string, string | undefined>;
  const formError = errors[""]?.[0];
  return (
    <SettingsPage
      title="Opening hours and closures"
      description="When patients can be booked. Nobody can be booked on a closed day, outside a site's opening hours, or with a clinician on leave, at the desk or online; bookings already made are kept."
      notice={formError ? { tone: "error", title: "Not saved", body: formError } : null}
      list={{
        title: "Closures from today",
        content: (
          <DataTable
            data={closures}
            columns={columns}
            getRowId={(c) => c.id}
            caption="Closures and leave from today"
            empty="No closures ahead."
          />
        ),
      }}
      form={{
        title: "Add a closure or leave",
        content: (
          <Form method="post" className="grid gap-4 sm:grid-cols-2" noValidate key={closures.length}>
            <input type="hidden" name="intent" value="add" />
            <SelectField
              label="Kind"
              errors={errors.kind}
              selectProps={{ id: "closure-kind", name: "kind", defaultValue: defaults.kind ?? "practice" }}
            >
              {(["practice", "bank_holiday", "leave"] as const).map((k) => (
                <option key={k} value={k}>
                  {CLOSURE_KIND_LABEL[k]}
                </option>
              ))}
            </SelectField>
            <Field
              label="Reason"
              hint="Shown to the desk and in the refusal, e.g. Staff training or Annual leave."
              errors={errors.reason}
              inputProps={{ id: "closure-reason", name: "reason", type: "text", defaultValue: defaults.reason }}
            />
            {(
              [
                ["startsOn", "First day", undefined],
                ["endsOn", "Last day", "Leave empty for a single day."],
              ] as const
            ).map(([name, label, hint]) => (
              <Field
                key={name}
                label={label}
                hint={hint}
                errors={errors[name]}
                inputProps={{ id: `closure-${name}`, name, type: "date", min: today, defaultValue: defaults[name] }}
              />
            ))}
            {sites.length > 1 ? (
              <ChoiceField
                errors={errors}
                defaults={defaults}
                name="siteId"
                label="Site (not for leave)"
                none="Every site"
                options={sites}
              />
            ) : null}
            <ChoiceField
              errors={errors}
              defaults={defaults}
              name="providerId"
              label="Clinician (for leave only)"
              none="Not leave"
              options={providers}
            />
            <div className="sm:col-span-2">
              <Button type="submit" pending={navigation.state === "submitting"}>
                Add closure
              </Button>
            </div>
          </Form>
        ),
      }}
    >
      <SettingsSection
        title="Opening hours"
        actions={
          <Link to="/settings/sites" className="text-sm font-semibold text-accent-700 underline underline-offset-4">
            Change opening hours
          </Link>
        }
      >
        <p className="mb-3 text-sm text-muted">
          Each site&apos;s week. Clinicians&apos; working hours must fit inside; a day without hours is closed.
        </p>
        <div className="grid gap-4 sm:grid-cols-2">
          {sites.map((s) => (
            <DataTable
              key={s.id}
              data={s.days}
              columns={s.set ? weekColumns : unsetWeekColumns}
              getRowId={(d) => d.name}
              caption={s.name}
              captionVisible
              headerHidden
              empty="No days to show."
            />
          ))}
        </div>
      </SettingsSection>
    </SettingsPage>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Opening hours and closures · Dioptra" }];
