/**
 * The exam's section menu: stays at the top of the window while a long exam scrolls, and shows
 * each section's save state in words and an icon (colour is only a third cue).
 */
import { Icon } from "~/components/ui/icon";
import { EXAM_SECTIONS } from "~/lib/exam/section-list";
import { sectionAnchor, type SectionState } from "./exam-form";

const SHORT: Record<SectionState, string> = {
  empty: "empty",
  saved: "saved",
  unsaved: "unsaved",
  saving: "saving",
  failed: "not saved",
};
const ICON = { empty: "info", saved: "check", unsaved: "alert", saving: "info", failed: "cross" } as const;
const TEXT = {
  empty: "text-muted",
  saved: "text-emerald-800",
  unsaved: "text-amber-900",
  saving: "text-sky-900",
  failed: "text-red-800",
} as const;

export function SectionMenu({
  shown,
  states,
  readOnly,
  recorded,
}: {
  shown: (section: string) => boolean;
  states: Record<string, SectionState>;
  readOnly: boolean;
  recorded: (section: string) => boolean;
}) {
  return (
    <nav
      aria-label="Exam sections"
      data-testid="section-menu"
      className="sticky top-0 z-20 mb-6 rounded-lg border border-line bg-white/95 px-2 py-1 text-sm shadow-sm backdrop-blur"
    >
      <ul className="flex gap-x-1 overflow-x-auto whitespace-nowrap">
        <li>
          <a
            href="#triage-title"
            className="inline-flex min-h-10 min-w-10 items-center rounded px-2 font-semibold text-accent-800 underline-offset-4 hover:underline"
          >
            Triage
          </a>
        </li>
        {EXAM_SECTIONS.filter(({ id }) => shown(id)).map(({ id, nav }) => {
          const state: SectionState = states[id] ?? (recorded(id) ? "saved" : "empty");
          return (
            <li key={id}>
              <a
                href={`#${sectionAnchor(id)}`}
                data-menu-section={id}
                data-state={readOnly ? "signed" : state}
                className="inline-flex min-h-10 min-w-10 items-center gap-1 rounded px-2 font-semibold text-accent-800 underline-offset-4 hover:underline"
              >
                {nav}
                {readOnly ? null : (
                  <span className={`inline-flex items-center gap-0.5 text-xs font-normal ${TEXT[state]}`}>
                    <Icon name={ICON[state]} className="size-3.5" />
                    <span>
                      <span className="sr-only">, </span>
                      {SHORT[state]}
                    </span>
                  </span>
                )}
              </a>
            </li>
          );
        })}
      </ul>
    </nav>
  );
}
