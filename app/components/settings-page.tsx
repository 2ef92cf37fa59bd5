/**
 * The shape every settings page shares: a heading and what the page is for, one place for the
 * page's notices, the list of what there is, and the form that adds (or edits) an item.
 */
import type { ReactNode } from "react";
import { Form, Link, useNavigation } from "react-router";
import { ErrorList } from "~/components/forms";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input } from "~/components/ui/input";
import { Notice } from "~/components/ui/notice";

export type SettingsNotice = { tone: "info" | "success" | "warning" | "error"; title: ReactNode; body?: ReactNode };

export function SettingsPage({
  title,
  description,
  notice,
  form,
  list,
  actions,
  children,
}: {
  title: string;
  description: ReactNode;
  /** Links or buttons beside the heading (e.g. "Add a site"). */
  actions?: ReactNode;
  /** Shown under the heading, e.g. why the last change was not saved. */
  notice?: SettingsNotice | null;
  /** The add/edit form area: its heading and the form. */
  form?: { title: ReactNode; content: ReactNode } | null;
  /** The list of what there is: its heading and the table. */
  list?: { title: ReactNode; content: ReactNode; actions?: ReactNode } | null;
  /** Further sections, each a `SettingsSection`. */
  children?: ReactNode;
}) {
  return (
    <>
      <PageHeader title={title} description={description} actions={actions} />
      <div className="space-y-6">
        {notice ? (
          <Notice tone={notice.tone} title={notice.title}>
            {notice.body}
          </Notice>
        ) : null}
        {list ? (
          <SettingsSection title={list.title} actions={list.actions}>
            {list.content}
          </SettingsSection>
        ) : null}
        {form ? <SettingsSection title={form.title}>{form.content}</SettingsSection> : null}
        {children}
      </div>
    </>
  );
}

export function SettingsSection({
  title,
  actions,
  children,
}: {
  title: ReactNode;
  actions?: ReactNode;
  children: ReactNode;
}) {
  return (
    <Card title={title} actions={actions}>
      {children}
    </Card>
  );
}

export type AddField = {
  name: string;
  label: string;
  type?: "text" | "email" | "tel" | "number";
  inputMode?: "decimal" | "numeric";
};

/**
 * A form of plain text fields posted with `intent`, each labelled and wired to its errors
 * (`aria-invalid`, `aria-describedby`).
 */
export function AddItemForm({
  intent = "add",
  idPrefix,
  fields,
  errors,
  submitLabel,
  columns = 2,
}: {
  intent?: string;
  idPrefix: string;
  fields: AddField[];
  errors: (name: string) => string[] | undefined;
  submitLabel: string;
  columns?: 2 | 3;
}) {
  const navigation = useNavigation();
  const span = columns === 3 ? "sm:col-span-3" : "sm:col-span-2";
  return (
    <Form method="post" className={`grid gap-4 ${columns === 3 ? "sm:grid-cols-3" : "sm:grid-cols-2"}`} noValidate>
      <input type="hidden" name="intent" value={intent} />
      {fields.map(({ name, label, type = "text", inputMode }) => {
        const id = `${idPrefix}-${name}`;
        const errs = errors(name);
        return (
          <div key={name}>
            <label htmlFor={id} className="mb-1 block text-sm font-semibold">
              {label}
            </label>
            <Input
              id={id}
              name={name}
              type={type}
              inputMode={inputMode}
              aria-invalid={errs?.length ? true : undefined}
              aria-describedby={errs?.length ? `${id}-error` : undefined}
            />
            <ErrorList id={`${id}-error`} errors={errs} />
          </div>
        );
      })}
      <div className={span}>
        <Button
          type="submit"
          pending={navigation.state === "submitting" && navigation.formData?.get("intent") === intent}
        >
          {submitLabel}
        </Button>
      </div>
    </Form>
  );
}

/** The one-button form that takes an item out of use or puts it back (`intent` withdraw/restore). */
export function ActiveToggle({
  id,
  active,
  what,
  withdrawLabel,
  restoreLabel,
}: {
  id: string;
  active: boolean;
  /** Names the item for screen readers: "Withdraw: Fellgate Wren Olive". */
  what: string;
  withdrawLabel: string;
  restoreLabel: string;
}) {
  const label = active ? withdrawLabel : restoreLabel;
  return (
    <Form method="post">
      <input type="hidden" name="intent" value={active ? "withdraw" : "restore"} />
      <input type="hidden" name="id" value={id} />
      <Button type="submit" variant="ghost" aria-label={`${label}: ${what}`}>
        {label}
      </Button>
    </Form>
  );
}

/** The link that opens an item in the page's edit form (`?edit=id`). */
export function EditLink({ id, what, label = "Edit" }: { id: string; what: string; label?: string }) {
  return (
    <Link to={`?edit=${id}`} className="rounded-md border border-line px-3 py-1 text-sm font-semibold hover:bg-canvas">
      {label}
      <span className="sr-only"> {what}</span>
    </Link>
  );
}

/** A one-button form posting `intent` for one row, named for screen readers by `what`. */
export function RowIntentButton({
  id,
  idName = "id",
  intent,
  label,
  what,
  variant = "secondary",
}: {
  id: string;
  idName?: string;
  intent: string;
  label: string;
  what: string;
  variant?: "secondary" | "ghost" | "danger";
}) {
  return (
    <Form method="post">
      <input type="hidden" name={idName} value={id} />
      <Button type="submit" name="intent" value={intent} variant={variant} className="px-3 py-1">
        {label}
        <span className="sr-only"> {what}</span>
      </Button>
    </Form>
  );
}

/** A time-of-day input (5-minute steps) for a table cell, labelled for screen readers and tied to its row's errors. */
export function TimeInput({
  name,
  label,
  defaultValue,
  errorId,
}: {
  /** Also the input's id. */
  name: string;
  label: string;
  defaultValue: string;
  /** The id of the row's error list when the row has errors. */
  errorId?: string;
}) {
  return (
    <>
      <label className="sr-only" htmlFor={name}>
        {label}
      </label>
      <Input
        id={name}
        name={name}
        type="time"
        step={300}
        defaultValue={defaultValue}
        className="w-32"
        aria-invalid={errorId ? true : undefined}
        aria-describedby={errorId}
      />
    </>
  );
}

/** The page-level notice for a form refused as a whole (`""`) or field by field. */
export function refusalNotice(errors: Record<string, string[] | undefined>, what = "fields"): SettingsNotice | null {
  if (errors[""]?.length) return { tone: "error", title: "Not saved", body: errors[""].join(" ") };
  if (Object.keys(errors).length) return { tone: "error", title: `Not saved: check the ${what} marked below.` };
  return null;
}
