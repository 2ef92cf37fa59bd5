import { getFormProps, getInputProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { sql } from "drizzle-orm";
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/forgot-password";
import { AuthCard } from "~/components/auth-card";
import { Field } from "~/components/forms";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";
import { users } from "~/db/schema";
import { audit } from "~/utils/audit.server";
import { db } from "~/utils/db.server";
import { absoluteUrl, sendMail } from "~/utils/mail.server";
import { issueUserToken } from "~/utils/tokens.server";

const schema = z.object({
  email: z.string({ error: "Enter your e-mail address." }).trim().toLowerCase().pipe(z.email({ error: "Enter a valid e-mail address, like name@example.com." })),
});

export async function action({ request }: Route.ActionArgs) {
  const submission = parseWithZod(await request.formData(), { schema });
  if (submission.status !== "success") return data({ result: submission.reply(), sent: false }, { status: 400 });
  const [user] = await db
    .select({ id: users.id, name: users.name, email: users.email, active: users.active })
    .from(users)
    .where(sql`lower(${users.email}) = ${submission.value.email}`)
    .limit(1);
  if (user?.active) {
    const token = await issueUserToken(user.id, "reset");
    const link = absoluteUrl(`/reset-password?token=${token}`);
    try {
      await sendMail({
        to: user.email,
        subject: "Reset your Dioptra password",
        text: `Hello ${user.name},\n\nSomeone asked to reset the password of your Dioptra account. If it was you, open this link within one hour to choose a new password:\n\n${link}\n\nThe link works once. If you did not ask for this, ignore this e-mail: your password stays as it is.\n`,
      });
      await audit({ action: "auth.reset_requested", actorUserId: user.id, request });
    } catch (error) {
      console.error("[mail] reset e-mail failed:", (error as Error).message);
    }
  }
  // The same answer whether or not the address has an account, so accounts cannot be discovered.
  return { result: submission.reply({ resetForm: true }), sent: true };
}

export default function ForgotPassword({ actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const [form, fields] = useForm({
    id: "forgot-password",
    lastResult: actionData?.result,
    onValidate: ({ formData }) => parseWithZod(formData, { schema }),
    shouldValidate: "onBlur",
  });
  return (
    <AuthCard title="Reset your password">
        <p className="mt-1 text-sm text-muted">We will e-mail you a link to choose a new one. It works once, for one hour.</p>
        {actionData?.sent ? (
          <div className="mt-6">
            <Notice tone="success" title="Check your e-mail">
              If an account exists for that address, a reset link is on its way.
            </Notice>
          </div>
        ) : null}
        <Form method="post" {...getFormProps(form)} className="mt-6 space-y-4">
          <Field label="E-mail" errors={fields.email.errors} inputProps={{ ...getInputProps(fields.email, { type: "email" }), autoComplete: "email" }} />
          <Button type="submit" className="w-full" pending={navigation.state === "submitting"}>
            Send reset link
          </Button>
        </Form>
        <p className="mt-6 text-sm">
          <Link to="/login" className="font-semibold text-accent-700 underline underline-offset-4">
            Back to sign in
          </Link>
        </p>
    </AuthCard>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Reset password · Dioptra" }];
