/**
 * "Copy the subjective refraction into the final": per eye or both, from what the subjective
 * section shows now. The final section's fields are filled as if typed, so they are checked and
 * saved as any typing is, and can be changed before signing.
 */
import { useState } from "react";
import { Button } from "~/components/ui/button";
import { EYES, type EyeKey } from "~/lib/exam/sections";
import { applyValues, formEntries, sectionFormId } from "./section-drafts";

const WHICH = { right: "right eye", left: "left eye", both: "both eyes" } as const;

export function CopySubjective() {
  const [message, setMessage] = useState("");
  function copy(which: EyeKey | "both") {
    const from = document.getElementById(sectionFormId("refraction:subjective")) as HTMLFormElement | null;
    const to = document.getElementById(sectionFormId("refraction:final")) as HTMLFormElement | null;
    if (!from || !to) return;
    const eyes = which === "both" ? EYES : [which];
    const typed = formEntries(from);
    const missing = eyes.filter((eye) => !typed.some(([k, v]) => k === `${eye}_rx` && v.trim()));
    if (missing.length) {
      setMessage(
        `Nothing copied: the subjective refraction has no ${missing.map((e) => WHICH[e]).join(" or ")} sphere to copy.`,
      );
      return;
    }
    applyValues(to, typed, (name) => eyes.some((eye) => name.startsWith(`${eye}_`)));
    setMessage(`Copied the subjective refraction of the ${WHICH[which]} into the final; check it before signing.`);
  }
  return (
    <div className="mb-4 rounded-md border border-line bg-canvas p-3">
      <p className="mb-2 text-sm font-semibold" id="copy-subjective-label">
        Copy the subjective refraction into the final
      </p>
      <div role="group" aria-labelledby="copy-subjective-label" className="flex flex-wrap gap-2">
        {(["right", "left", "both"] as const).map((w) => (
          <Button key={w} type="button" variant="secondary" className="min-h-11" onClick={() => copy(w)}>
            {w === "both" ? "Both eyes" : w === "right" ? "Right eye" : "Left eye"}
            <span className="sr-only"> (copy subjective to final)</span>
          </Button>
        ))}
      </div>
      <p role="status" className="mt-2 text-sm" data-testid="copy-subjective-result">
        {message}
      </p>
    </div>
  );
}
