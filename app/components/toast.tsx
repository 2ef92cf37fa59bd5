import { useState } from "react";
import { Notice } from "./ui/notice";

type Toast = { kind: "success" | "info" | "warning" | "error"; title: string; description?: string };

/** Shows the flash message of the last action; it stays until dismissed or the next navigation. */
export function ToastViewport({ toast }: { toast: Toast | null }) {
  const [visible, setVisible] = useState<Toast | null>(toast);
  // A new flash message replaces the shown one (state adjusted while rendering, as React advises).
  const [shownFor, setShownFor] = useState(toast);
  if (toast !== shownFor) {
    setShownFor(toast);
    setVisible(toast);
  }
  if (!visible) return null;
  return (
    <div className="fixed right-4 bottom-4 z-40 w-[min(26rem,calc(100vw-2rem))] shadow-lg" data-testid="toast">
      <div className="relative">
        <Notice tone={visible.kind} title={visible.title}>
          {visible.description}
        </Notice>
        <button
          type="button"
          onClick={() => setVisible(null)}
          className="absolute top-2 right-2 rounded px-2 text-sm font-semibold"
          aria-label="Dismiss message"
        >
          ✕
        </button>
      </div>
    </div>
  );
}
