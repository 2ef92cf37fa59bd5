import type { InputHTMLAttributes, ReactNode, SelectHTMLAttributes } from "react";
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
