import { dateTimeFormat } from "~/lib/format/intl";
import type { Route } from "./+types/prescriptions";
import { portalSettings, requirePortalPatient } from "~/models/portal/portal.server";
import { PageHeader } from "~/components/page-header";
import { Card } from "~/components/ui/card";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { formatRx } from "~/lib/optics";
import { prescriptionsOf } from "~/models/prescriptions/prescriptions.server";
import { audit } from "~/utils/audit.server";

/** Sent as plain HTML, without scripts: the prescriptions are links to their PDFs. */
export const handle = { hydrate: false };

/** The patient's prescriptions: nothing else clinical. Every prescription is signed when issued. */
export async function loader({ request }: Route.LoaderArgs) {
  const { user, patientId } = await requirePortalPatient(request);
  const [list, settings] = await Promise.all([prescriptionsOf(patientId), portalSettings()]);
  await audit({
    action: "portal.prescriptions_read",
    actorUserId: user.id,
    patientId,
    entityType: "patient",
    entityId: patientId,
    request,
  });
  const today = new Date().toISOString().slice(0, 10);
  return {
    patientId,
    timeZone: settings.timeZone,
    prescriptions: list.map((p) => ({
      id: p.id,
      kind: p.kind,
      issuedAt: p.issuedAt,
      expiresOn: String(p.expiresOn),
      current: String(p.expiresOn) >= today,
      eyes: p.eyes.map((e) => ({
        eye: e.eye,
        rx: formatRx({ sphere: e.sphere, cylinder: e.cylinder, axis: e.axis }),
        add: e.addPower,
      })),
    })),
  };
}

export default function PortalPrescriptions({ loaderData }: Route.ComponentProps) {
  const { prescriptions, patientId, timeZone } = loaderData;
  const date = (iso: string) =>
    dateTimeFormat("en-GB", { dateStyle: "medium", timeZone }).format(
      new Date(iso.length === 10 ? `${iso}T12:00:00Z` : iso),
    );
  const current = prescriptions.filter((p) => p.current);
  const older = prescriptions.filter((p) => !p.current);
  const item = (p: (typeof prescriptions)[number]) => (
    <li key={p.id}>
      <Card
        title={p.kind === "spectacle" ? "Spectacles" : "Contact lenses"}
        actions={
          p.current ? (
            <StatusBadge tone="success">Valid until {date(p.expiresOn)}</StatusBadge>
          ) : (
            <StatusBadge tone="warning">Expired {date(p.expiresOn)}</StatusBadge>
          )
        }
      >
        <p className="text-sm text-muted">Issued {date(p.issuedAt)}</p>
        <dl className="mt-2 grid grid-cols-[5rem_1fr] gap-y-1 font-mono text-sm">
          {p.eyes.map((e) => (
            <div key={e.eye} className="contents">
              <dt className="font-sans text-muted">{e.eye === "right" ? "Right" : "Left"}</dt>
              <dd>
                {e.rx}
                {e.add ? ` · add +${e.add.toFixed(2)}` : ""}
              </dd>
            </div>
          ))}
        </dl>
        <a
          href={`/patients/${patientId}/prescriptions/${p.id}/pdf`}
          className="mt-3 inline-block font-semibold text-accent-700 underline underline-offset-4"
        >
          Download the prescription (PDF)
        </a>
      </Card>
    </li>
  );
  return (
    <div className="mx-auto max-w-2xl space-y-6">
      <PageHeader title="Prescriptions" />
      <Notice tone="info" title="Using your prescription">
        A prescription is valid until the date shown; local law governs how it may be used. Take the PDF to any optician
        you choose. If your sight changes, book an exam rather than waiting for the date.
      </Notice>
      {current.length ? (
        <ul className="space-y-4">{current.map(item)}</ul>
      ) : (
        <p className="text-muted">No current prescription.</p>
      )}
      {older.length ? (
        <section>
          <h2 className="mb-3 text-lg">Earlier prescriptions</h2>
          <ul className="space-y-4">{older.map(item)}</ul>
        </section>
      ) : null}
    </div>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Prescriptions · Dioptra" }];
