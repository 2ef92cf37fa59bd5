import type { ReactNode } from "react";
import { Icon, type IconName } from "./icon";

type Tone = "info" | "success" | "warning" | "error";

const tones: Record<Tone, { box: string; icon: IconName; label: string }> = {
  info: { box: "border-sky-300 bg-sky-50 text-sky-950", icon: "info", label: "Note" },
  success: { box: "border-emerald-300 bg-emerald-50 text-emerald-950", icon: "check", label: "Done" },
  warning: { box: "border-amber-400 bg-amber-50 text-amber-950", icon: "alert", label: "Caution" },
  error: { box: "border-red-300 bg-red-50 text-red-950", icon: "cross", label: "Problem" },
};

/** A message box whose meaning is carried by its icon and its label word, not only its colour. */
export function Notice({
  tone = "info",
  title,
  children,
  id,
}: {
  tone?: Tone;
  title?: ReactNode;
  children?: ReactNode;
  id?: string;
}) {
  const t = tones[tone];
  return (
    <div
      id={id}
      role={tone === "error" ? "alert" : "status"}
      className={`flex gap-3 rounded-md border px-4 py-3 text-sm ${t.box}`}
    >
      <Icon name={t.icon} className="mt-0.5 size-5 shrink-0" />
      <div>
        <p className="font-semibold">
          <span className="sr-only">{t.label}: </span>
          {title ?? t.label}
        </p>
        {children ? <div className="mt-1">{children}</div> : null}
      </div>
    </div>
  );
}

/** A status word with an icon; colour is a third, redundant cue. */
export function StatusBadge({ tone, children }: { tone: Tone; children: ReactNode }) {
  const t = tones[tone];
  return (
    <span className={`inline-flex items-center gap-1 rounded-full border px-2 py-0.5 text-xs font-semibold ${t.box}`}>
      <Icon name={t.icon} className="size-3.5" />
      {children}
    </span>
  );
}
