import { getInputProps, getSelectProps, type FieldMetadata } from "@conform-to/react";
import { useEffect, useRef, type InputHTMLAttributes, type ReactNode, type SelectHTMLAttributes } from "react";
import { useActionData, useNavigation } from "react-router";
import { Input, Select } from "./ui/input";

export type FieldErrors = string[] | undefined;

export function ErrorList({ id, errors }: { id?: string; errors?: FieldErrors }) {
  if (!errors?.length) return null;
  return (
    <ul id={id} className="mt-1 space-y-0.5 text-sm font-semibold text-red-800">
      {errors.map((e) => (
        <li key={e}>
          <span aria-hidden="true">✕ </span>
          {e}
        </li>
      ))}
    </ul>
  );
}

/** Label, control and its errors, wired for screen readers (aria-invalid, aria-describedby). */
export function Field({
  label,
  hint,
  errors,
  inputProps,
}: {
  label: ReactNode;
  hint?: ReactNode;
  errors?: FieldErrors;
  inputProps: InputHTMLAttributes<HTMLInputElement> & { id: string };
}) {
  const errorId = errors?.length ? `${inputProps.id}-error` : undefined;
  const hintId = hint ? `${inputProps.id}-hint` : undefined;
  return (
    <div>
      <label htmlFor={inputProps.id} className="mb-1 block text-sm font-semibold">
        {label}
      </label>
      <Input
        {...inputProps}
        aria-invalid={errorId ? true : undefined}
        aria-describedby={[hintId, errorId].filter(Boolean).join(" ") || undefined}
      />
      {hint ? (
        <p id={hintId} className="mt-1 text-sm text-muted">
          {hint}
        </p>
      ) : null}
      <ErrorList id={errorId} errors={errors} />
    </div>
  );
}

export function SelectField({
  label,
  errors,
  selectProps,
  children,
}: {
  label: ReactNode;
  errors?: FieldErrors;
  selectProps: SelectHTMLAttributes<HTMLSelectElement> & { id: string };
  children: ReactNode;
}) {
  const errorId = errors?.length ? `${selectProps.id}-error` : undefined;
  return (
    <div>
      <label htmlFor={selectProps.id} className="mb-1 block text-sm font-semibold">
        {label}
      </label>
      <Select {...selectProps} aria-invalid={errorId ? true : undefined} aria-describedby={errorId}>
        {children}
      </Select>
      <ErrorList id={errorId} errors={errors} />
    </div>
  );
}

// eslint-disable-next-line @typescript-eslint/no-explicit-any -- any field of any conform form
type AnyField = FieldMetadata<any, any, string[]>;

/** A `Field` for a conform field: its input props and errors in one, for the common text-like inputs. */
export function FormField({
  field,
  label,
  hint,
  type = "text",
  inputMode,
  autoComplete,
}: {
  field: AnyField;
  label: ReactNode;
  hint?: ReactNode;
  type?: "text" | "email" | "tel" | "date" | "number" | "url" | "time";
  inputMode?: InputHTMLAttributes<HTMLInputElement>["inputMode"];
  autoComplete?: string;
}) {
  return (
    <Field
      label={label}
      hint={hint}
      errors={field.errors}
      inputProps={{ ...getInputProps(field, { type }), inputMode, autoComplete }}
    />
  );
}

/** A `SelectField` for a conform field. */
export function FormSelect({ field, label, children }: { field: AnyField; label: ReactNode; children: ReactNode }) {
  return (
    <SelectField label={label} errors={field.errors} selectProps={getSelectProps(field)}>
      {children}
    </SelectField>
  );
}

/**
 * A ref for a form that empties itself once its submission (the `intent` it posts) succeeded, so
 * what was typed cannot be sent twice by mistake. Success is an action that redirected (no action
 * data); a refused submission keeps what was typed.
 */
export function useResetAfterSuccess(intent: string) {
  const ref = useRef<HTMLFormElement>(null);
  const navigation = useNavigation();
  const actionData = useActionData();
  const submitted = useRef(false);
  useEffect(() => {
    if (navigation.state === "submitting") {
      submitted.current = navigation.formData?.get("intent") === intent;
    } else if (navigation.state === "idle" && submitted.current) {
      submitted.current = false;
      if (actionData === undefined) ref.current?.reset();
    }
  }, [navigation.state, navigation.formData, actionData, intent]);
  return ref;
}
