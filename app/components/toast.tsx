import { useState } from "react";
import { Notice } from "./ui/notice";

type Toast = { kind: "success" | "info" | "warning" | "error"; title: string; description?: string };

/**
 * Shows the flash message of the last action at the top of the page, in the page's own flow: it
 * pushes the page down rather than lying over it, so it never hides what it reports on (a flash
 * follows a redirect, which scrolls to the top). It stays until dismissed or the next navigation;
 * a page sent without scripts (`dismissible` false) shows it without the dismiss button.
 */
export function ToastViewport({ toast, dismissible = true }: { toast: Toast | null; dismissible?: boolean }) {
  const [visible, setVisible] = useState<Toast | null>(toast);
  // A new flash message replaces the shown one (state adjusted while rendering, as React advises).
  const [shownFor, setShownFor] = useState(toast);
  if (toast !== shownFor) {
    setShownFor(toast);
    setVisible(toast);
  }
  if (!visible) return null;
  return (
    <div className="mx-auto max-w-6xl px-4 pt-3" data-testid="toast">
      <div className="relative">
        <Notice tone={visible.kind} title={visible.title}>
          {visible.description}
        </Notice>
        {dismissible ? (
          <button
            type="button"
            onClick={() => setVisible(null)}
            className="absolute top-2 right-2 rounded px-2 text-sm font-semibold"
            aria-label="Dismiss message"
          >
            ✕
          </button>
        ) : null}
      </div>
    </div>
  );
}
