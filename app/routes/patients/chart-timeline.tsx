import type { Route } from "./+types/chart";

import { Card } from "~/components/ui/card";

import { formatDate, formatMoney } from "~/lib/format";

type LD = Route.ComponentProps["loaderData"];
type Item = { at: string; kind: string; label: string; href?: string; status?: string };

export function Timeline({ d }: { d: LD }) {
  const items: Item[] = [
    ...d.appointments.map((a) => ({
      at: a.startsAt,
      kind: "Appointment",
      label: `${a.type} with ${a.provider}`,
      status: a.status.replace("_", " "),
    })),
    ...d.invoices.map((i) => ({
      at: i.at,
      kind: "Invoice",
      label: `${i.label} · ${formatMoney(i.totalMinor, i.currency)}`,
      status: i.status.replace("_", " "),
      href: `/billing/invoices/${i.id}`,
    })),
    ...d.prescriptions.map((r) => ({
      at: r.issuedAt,
      kind: "Prescription",
      label: `${r.kind === "spectacle" ? "Spectacles" : "Contact lenses"} by ${r.prescriberName}`,
      status: r.current ? "current" : "expired",
      href: `/patients/${d.patient.id}/prescriptions/${r.id}/pdf`,
    })),
    ...(d.clinical
      ? [
          ...d.exams.map((e) => ({
            at: e.examinedAt,
            kind: "Exam",
            label: `Exam by ${e.optometrist}`,
            status: e.status === "signed" ? "signed" : "in progress",
            href: `/patients/${d.patient.id}/exams/${e.id}`,
          })),
          ...d.documents.rows.map((doc) => ({
            at: doc.createdAt,
            kind: "Document",
            label: doc.originalName,
            href: `/patients/${d.patient.id}/documents/${doc.id}/file`,
          })),
          ...d.referrals.map((r) => ({
            at: r.sentAt ?? r.createdAt,
            kind: "Referral",
            label: `${r.reference}${r.recipient ? ` to ${r.recipient}` : ""}`,
            status: r.status,
            href: `/referrals/${r.id}`,
          })),
        ]
      : []),
  ].sort((a, b) => b.at.localeCompare(a.at));
  return (
    <Card title="Timeline">
      {items.length ? (
        <ol className="divide-y divide-line">
          {items.map((it, i) => (
            <li key={`${it.kind}-${it.at}-${i}`} className="flex flex-wrap items-baseline gap-x-4 gap-y-1 py-2 text-sm">
              <span className="w-28 shrink-0 text-muted">{formatDate(it.at)}</span>
              <span className="w-28 shrink-0 font-semibold">{it.kind}</span>
              {it.href ? (
                <a href={it.href} className="text-accent-800 underline">
                  {it.label}
                </a>
              ) : (
                <span>{it.label}</span>
              )}
              {it.status ? <span className="text-muted">· {it.status}</span> : null}
            </li>
          ))}
        </ol>
      ) : (
        <p className="text-muted">Nothing recorded yet.</p>
      )}
    </Card>
  );
}

export const meta: Route.MetaFunction = ({ data: d }) => [
  { title: d ? `${d.patient.lastName}, ${d.patient.firstName} · Dioptra` : "Chart · Dioptra" },
];
