/** The referral triage proposal beside the findings: urgency, each reason with its eye, rule and source, and the caution. */
import { URGENCY_LABEL } from "~/lib/referrals";
import { Card } from "~/components/ui/card";
import { StatusBadge } from "~/components/ui/notice";

type Reason = { urgency: string; eye?: string; rule: string; source: string };
export type TriageView = { urgency: string | null; reasons: Reason[] } | null;

const EYE_WORD: Record<string, string> = { R: "Right eye", L: "Left eye", both: "Both eyes" };
const label = (u: string) => URGENCY_LABEL[u as keyof typeof URGENCY_LABEL] ?? u;
const tone = (u: string | null) => (u === "same_day" || u === "urgent" ? "warning" : "info");

export function TriagePanel({ triage }: { triage: TriageView }) {
  return (
    <section aria-labelledby="triage-title" data-testid="triage">
      <Card
        title={<span id="triage-title">Referral triage</span>}
        actions={
          triage ? (
            <span data-testid="triage-urgency">
              <StatusBadge tone={tone(triage.urgency)}>
                {triage.urgency ? `Proposed: ${label(triage.urgency)}` : "No referral proposed"}
              </StatusBadge>
            </span>
          ) : null
        }
      >
        <p className="mb-3 text-sm">
          <strong>A prompt for your judgement, not a decision.</strong> Triage reads the saved findings after every save
          and proposes an urgency from published UK referral guidance. You decide whether and how urgently to refer;
          local referral protocols, the law and licensed practice govern.
        </p>
        {!triage ? (
          <p className="text-muted">Nothing saved yet.</p>
        ) : triage.reasons.length === 0 ? (
          <p className="text-muted">No finding saved so far calls for a referral.</p>
        ) : (
          <ol className="space-y-2">
            {triage.reasons.map((r, i) => (
              <li key={i} className="rounded-md border border-line p-2 text-sm">
                <p>
                  <StatusBadge tone={tone(r.urgency)}>{label(r.urgency)}</StatusBadge>{" "}
                  <span className="font-semibold">{r.eye ? `${EYE_WORD[r.eye] ?? r.eye}: ` : ""}</span>
                  {r.rule}
                </p>
                <p className="mt-1 text-xs text-muted">Source: {r.source}</p>
              </li>
            ))}
          </ol>
        )}
      </Card>
    </section>
  );
}
