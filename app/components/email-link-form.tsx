import type { ReactNode } from "react";
import { Form, Link, useNavigation } from "react-router";
import { AuthCard } from "~/components/auth-card";
import { Field } from "~/components/forms";
import { replyErrors, serverInput, type ServerReply } from "~/components/server-form";
import { Button } from "~/components/ui/button";
import { Notice } from "~/components/ui/notice";

/**
 * A signed-out page that asks for an e-mail address and mails a one-time link (password reset,
 * patient sign-in link). Checked by the server only: the page ships no validation code.
 */
export function EmailLinkForm({
  id,
  title,
  intro,
  sentText,
  submitLabel,
  back,
  actionData,
}: {
  id: string;
  title: string;
  intro: ReactNode;
  sentText: ReactNode;
  submitLabel: string;
  back: string;
  actionData: { result: ServerReply; sent: boolean } | undefined;
}) {
  const navigation = useNavigation();
  const reply = actionData?.result;
  const formErrors = replyErrors(reply, "");
  return (
    <AuthCard title={title}>
      <p className="mt-1 text-sm text-muted">{intro}</p>
      {actionData?.sent ? (
        <div className="mt-6">
          <Notice tone="success" title="Check your e-mail">
            {sentText}
          </Notice>
        </div>
      ) : null}
      <Form method="post" id={id} key={actionData?.sent ? "sent" : "open"} noValidate className="mt-6 space-y-4">
        {formErrors ? (
          <Notice tone="error" title="Not sent" id={`${id}-form-error`}>
            {formErrors.join(" ")}
          </Notice>
        ) : null}
        <Field
          label="E-mail"
          errors={replyErrors(reply, "email")}
          inputProps={{ ...serverInput(id, reply, "email", "email"), autoComplete: "email" }}
        />
        <Button type="submit" className="w-full" pending={navigation.state === "submitting"}>
          {submitLabel}
        </Button>
      </Form>
      <p className="mt-6 text-sm">
        <Link to="/login" className="font-semibold text-accent-700 underline underline-offset-4">
          {back}
        </Link>
      </p>
    </AuthCard>
  );
}
