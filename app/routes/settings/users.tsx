import { createColumnHelper } from "@tanstack/react-table";
import { getFormProps, getInputProps, getSelectProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, useFetcher, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/users";
import { changeRole, inviteUser, setActive, staffAccounts, UserAdminError } from "~/models/users/users.server";
import { Field, SelectField, useResetAfterSuccess } from "~/components/forms";
import { DataTable } from "~/components/data-table";
import { RowIntentButton, SettingsPage } from "~/components/settings-page";
import { Button } from "~/components/ui/button";
import { Select } from "~/components/ui/input";
import { StatusBadge } from "~/components/ui/notice";
import { requireRole } from "~/utils/auth.server";
import { ROLE_LABEL } from "~/utils/nav";
import { redirectWithToast } from "~/utils/toast.server";

const staffRole = z.enum(["owner", "optometrist", "receptionist"], { error: "Choose a role." });

const inviteSchema = z.object({
  intent: z.literal("invite"),
  name: z.string({ error: "Give the person's name." }).trim().min(2, "Give the person's name.").max(120),
  email: z
    .string({ error: "Enter an e-mail address." })
    .trim()
    .toLowerCase()
    .pipe(z.email({ error: "Enter a valid e-mail address." })),
  role: staffRole,
  licenceNumber: z.string().trim().max(40).optional(),
});
const roleSchema = z.object({ intent: z.literal("role"), userId: z.uuid(), role: staffRole });
const activeSchema = z.object({ intent: z.enum(["deactivate", "reactivate"]), userId: z.uuid() });
const schema = z.discriminatedUnion("intent", [inviteSchema, roleSchema, activeSchema]);

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  return { users: await staffAccounts() };
}

export async function action({ request }: Route.ActionArgs) {
  const actor = await requireRole(request, ["owner"]);
  const submission = parseWithZod(await request.formData(), { schema });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  const v = submission.value;
  try {
    if (v.intent === "invite") {
      await inviteUser(actor, v, request);
      return redirectWithToast("/settings/users", { kind: "success", title: `Invitation sent to ${v.email}` });
    }
    if (v.intent === "role") {
      await changeRole(actor, v.userId, v.role, request);
      return redirectWithToast("/settings/users", { kind: "success", title: `Role changed to ${ROLE_LABEL[v.role]}` });
    }
    await setActive(actor, v.userId, v.intent === "reactivate", request);
    return redirectWithToast("/settings/users", {
      kind: "success",
      title: v.intent === "reactivate" ? "Account reactivated" : "Account deactivated; its sessions have ended",
    });
  } catch (error) {
    if (error instanceof UserAdminError)
      return data(submission.reply({ formErrors: [error.message] }), { status: 409 });
    throw error;
  }
}

function RoleForm({ user }: { user: { id: string; role: string; name: string } }) {
  const fetcher = useFetcher<typeof action>();
  return (
    <fetcher.Form method="post" className="flex items-center gap-2">
      <input type="hidden" name="intent" value="role" />
      <input type="hidden" name="userId" value={user.id} />
      <label className="sr-only" htmlFor={`role-${user.id}`}>
        Role of {user.name}
      </label>
      <Select id={`role-${user.id}`} name="role" defaultValue={user.role} className="w-40 py-1 text-sm">
        <option value="owner">{ROLE_LABEL.owner}</option>
        <option value="optometrist">{ROLE_LABEL.optometrist}</option>
        <option value="receptionist">{ROLE_LABEL.receptionist}</option>
      </Select>
      <Button type="submit" variant="secondary" className="px-3 py-1" pending={fetcher.state !== "idle"}>
        Change
      </Button>
      {fetcher.data?.error?.[""]?.length ? (
        <span role="alert" className="text-sm font-semibold text-red-800">
          ✕ {fetcher.data.error[""].join(" ")}
        </span>
      ) : null}
    </fetcher.Form>
  );
}

type User = Awaited<ReturnType<typeof loader>>["users"][number];
const col = createColumnHelper<User>();
const userColumns = [
  col.accessor("name", { header: "Name", meta: { className: "font-semibold" } }),
  col.accessor("email", { header: "E-mail" }),
  col.accessor("active", {
    header: "Status",
    cell: ({ row: { original: u } }) =>
      !u.active ? (
        <StatusBadge tone="error">Deactivated</StatusBadge>
      ) : u.pending ? (
        <StatusBadge tone="warning">Invited</StatusBadge>
      ) : (
        <StatusBadge tone="success">Active</StatusBadge>
      ),
  }),
  col.accessor("role", {
    header: "Role",
    cell: ({ row: { original: u } }) => (u.role === "patient" ? ROLE_LABEL.patient : <RoleForm user={u} />),
  }),
  col.display({
    id: "actions",
    header: () => <span className="sr-only">Actions</span>,
    cell: ({ row: { original: u } }) => (
      <RowIntentButton
        id={u.id}
        idName="userId"
        intent={u.active ? "deactivate" : "reactivate"}
        label={u.active ? "Deactivate" : "Reactivate"}
        what={u.name}
        variant={u.active ? "danger" : "secondary"}
      />
    ),
  }),
];

export default function UsersSettings({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const inviteRef = useResetAfterSuccess("invite");
  const [form, fields] = useForm({
    id: "invite",
    lastResult: navigation.state === "idle" ? actionData : null,
    onValidate: ({ formData }) => parseWithZod(formData, { schema: inviteSchema }),
    shouldValidate: "onBlur",
  });
  return (
    <SettingsPage
      title="Team and accounts"
      description="Invite colleagues, change roles and close accounts. Every change is recorded in the audit log."
      notice={form.errors?.length ? { tone: "error", title: "Not done", body: form.errors.join(" ") } : null}
      list={{
        title: "Accounts",
        content: (
          <DataTable
            data={loaderData.users}
            columns={userColumns}
            getRowId={(u) => u.id}
            caption="Accounts"
            empty="No accounts."
          />
        ),
      }}
      form={{
        title: "Invite a colleague",
        content: (
          <Form method="post" {...getFormProps(form)} ref={inviteRef} className="grid gap-4 sm:grid-cols-2">
            <input type="hidden" name="intent" value="invite" />
            <Field label="Name" errors={fields.name.errors} inputProps={getInputProps(fields.name, { type: "text" })} />
            <Field
              label="E-mail"
              errors={fields.email.errors}
              inputProps={getInputProps(fields.email, { type: "email" })}
            />
            <SelectField label="Role" errors={fields.role.errors} selectProps={getSelectProps(fields.role)}>
              <option value="">Choose…</option>
              <option value="optometrist">{ROLE_LABEL.optometrist}</option>
              <option value="receptionist">{ROLE_LABEL.receptionist}</option>
              <option value="owner">{ROLE_LABEL.owner}</option>
            </SelectField>
            <Field
              label="Licence or registration number"
              hint="For optometrists: printed on prescriptions."
              errors={fields.licenceNumber.errors}
              inputProps={getInputProps(fields.licenceNumber, { type: "text" })}
            />
            <div className="sm:col-span-2">
              <Button type="submit" pending={navigation.state === "submitting"}>
                Send invitation
              </Button>
            </div>
          </Form>
        ),
      }}
    />
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Team and accounts · Dioptra" }];
