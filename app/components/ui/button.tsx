import type { ButtonHTMLAttributes } from "react";

type Variant = "primary" | "secondary" | "danger" | "ghost";

/** The classes of a button of `variant` (see `.btn` in app.css), with `extra` utilities after them. */
export function buttonClass(variant: Variant = "primary", extra = "") {
  return extra ? `btn btn-${variant} ${extra}` : `btn btn-${variant}`;
}

export function Button({
  variant = "primary",
  pending = false,
  className = "",
  children,
  ...props
}: ButtonHTMLAttributes<HTMLButtonElement> & { variant?: Variant; pending?: boolean }) {
  return (
    <button
      {...props}
      disabled={props.disabled || pending}
      aria-busy={pending || undefined}
      className={buttonClass(variant, className)}
    >
      {pending ? (
        <span
          className="size-3.5 animate-spin rounded-full border-2 border-current border-t-transparent"
          aria-hidden="true"
        />
      ) : null}
      {children}
    </button>
  );
}
