import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/reminders";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { emailChoicesOf, saveEmailChoices } from "~/models/portal/email-choices.server";
import { requirePortalPatient } from "~/models/portal/portal.server";
import { redirectWithToast } from "~/utils/toast.server";
import { notFound } from "~/utils/failure.server";

const schema = z.object({
  remindersByEmail: z.literal("on").optional(),
  recallsByEmail: z.literal("on").optional(),
});

/** Sent as plain HTML, without scripts: the choices are one form. */
export const handle = { hydrate: false };

export async function loader({ request }: Route.LoaderArgs) {
  const { patientId } = await requirePortalPatient(request);
  const row = await emailChoicesOf(patientId);
  if (!row) notFound();
  return row;
}

export async function action({ request }: Route.ActionArgs) {
  const { user, patientId } = await requirePortalPatient(request);
  const submission = parseWithZod(await request.formData(), { schema });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  const choice = {
    remindersByEmail: submission.value.remindersByEmail === "on",
    recallsByEmail: submission.value.recallsByEmail === "on",
  };
  await saveEmailChoices({ actorUserId: user.id, patientId, choice, request });
  return redirectWithToast("/portal/reminders", { kind: "success", title: "Your reminder choices are saved" });
}

function Toggle({
  name,
  label,
  hint,
  defaultChecked,
}: {
  name: string;
  label: string;
  hint: string;
  defaultChecked: boolean;
}) {
  return (
    <label className="flex cursor-pointer items-start gap-3 rounded-md border border-line p-4 has-[:checked]:border-accent-600 has-[:checked]:bg-accent-50">
      <input
        type="checkbox"
        name={name}
        defaultChecked={defaultChecked}
        className="mt-1 size-5 accent-accent-700"
        aria-describedby={`${name}-hint`}
      />
      <span>
        <span className="block font-semibold">{label}</span>
        <span id={`${name}-hint`} className="block text-sm text-muted">
          {hint}
        </span>
      </span>
    </label>
  );
}

export default function ReminderChoices({ loaderData }: Route.ComponentProps) {
  const navigation = useNavigation();
  return (
    <div className="mx-auto max-w-xl">
      <PageHeader
        title="Reminders"
        description={
          loaderData.email ? `E-mails go to ${loaderData.email}.` : "The practice has no e-mail address for you yet."
        }
      />
      <Card>
        <Form method="post" className="space-y-4">
          <Toggle
            name="remindersByEmail"
            label="Appointment e-mails"
            hint="Confirmation when you book, a reminder before the visit, and a notice if it is cancelled."
            defaultChecked={loaderData.remindersByEmail}
          />
          <Toggle
            name="recallsByEmail"
            label="Recall e-mails"
            hint="A message when your next routine eye exam is due."
            defaultChecked={loaderData.recallsByEmail}
          />
          <Button type="submit" pending={navigation.state === "submitting"}>
            Save my choices
          </Button>
        </Form>
      </Card>
    </div>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Reminders · Dioptra" }];
