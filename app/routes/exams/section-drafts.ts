/**
 * What was typed in a section and not yet saved, kept in this browser tab's session storage (it
 * survives a reload, and is gone when the tab is closed, so no clinical text stays on a shared
 * computer), and the DOM helpers that put typed values back into a section's form.
 */
export type LocalDraft = { at: string; values: [string, string][]; failed?: string };

const key = (examId: string, section: string) => `dioptra.exam.${examId}.${section}`;

export function readDraft(examId: string, section: string): LocalDraft | null {
  try {
    const raw = window.sessionStorage.getItem(key(examId, section));
    return raw ? (JSON.parse(raw) as LocalDraft) : null;
  } catch {
    return null;
  }
}

export function writeDraft(examId: string, section: string, draft: LocalDraft) {
  try {
    window.sessionStorage.setItem(key(examId, section), JSON.stringify(draft));
  } catch {
    // Storage full or refused: the section still saves; only a reload would lose the typing.
  }
}

export function clearDraft(examId: string, section: string) {
  try {
    window.sessionStorage.removeItem(key(examId, section));
  } catch {
    // Nothing kept, nothing to clear.
  }
}

/** The typed fields of a form as [name, value] pairs (not the hidden intent and section). */
export function formEntries(form: HTMLFormElement): [string, string][] {
  return [...new FormData(form).entries()].flatMap(([k, v]) =>
    typeof v === "string" && k !== "intent" && k !== "section" ? [[k, v] as [string, string]] : [],
  );
}

function setValue(el: HTMLInputElement | HTMLSelectElement | HTMLTextAreaElement, value: string) {
  // The prototype's setter, so React sees the change and runs the field's own handlers.
  Object.getOwnPropertyDescriptor(Object.getPrototypeOf(el), "value")?.set?.call(el, value);
  el.dispatchEvent(new Event("input", { bubbles: true }));
  el.dispatchEvent(new Event("change", { bubbles: true }));
}

/**
 * Puts values into a form's fields as if typed (checkboxes and radios ticked when their value is
 * listed). Only fields whose name passes `only` are touched; a field not listed is emptied.
 */
export function applyValues(
  form: HTMLFormElement,
  values: [string, string][],
  only: (name: string) => boolean = () => true,
) {
  const byName = new Map<string, string[]>();
  for (const [k, v] of values) byName.set(k, [...(byName.get(k) ?? []), v]);
  for (const el of Array.from(form.elements)) {
    if (!(el instanceof HTMLInputElement || el instanceof HTMLSelectElement || el instanceof HTMLTextAreaElement))
      continue;
    if (!el.name || el.type === "hidden" || el.type === "file" || !only(el.name)) continue;
    const wanted = byName.get(el.name) ?? [];
    if (el instanceof HTMLInputElement && (el.type === "checkbox" || el.type === "radio")) {
      const tick = wanted.includes(el.value);
      if (el.checked !== tick) {
        if (tick || el.type === "checkbox") el.click();
        else el.checked = false;
      }
    } else if (el.value !== (wanted[0] ?? "")) setValue(el, wanted[0] ?? "");
  }
}

/** The form of a section on the page. */
export const sectionFormId = (section: string) => `form-${section.replace(/[^a-z0-9]+/gi, "-")}`;
