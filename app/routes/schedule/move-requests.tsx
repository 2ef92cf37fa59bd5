import { Form, Link } from "react-router";
import { Button } from "~/components/ui/button";
import { Icon } from "~/components/ui/icon";

export type MoveRequest = {
  id: string;
  message: string;
  appointmentId: string;
  patientName: string;
  visitAt: string;
  askedAt: string;
};

/** Patients' requests from the portal to move a visit; the desk moves it on the calendar, then marks it dealt with. */
export function MoveRequests({ requests }: { requests: MoveRequest[] }) {
  if (!requests.length) return null;
  return (
    <section aria-labelledby="move-requests-title" className="mb-6 rounded-lg border border-amber-400 bg-amber-50 p-4">
      <h2 id="move-requests-title" className="flex items-center gap-2 text-base">
        <Icon name="alert" /> Patients asking to move a visit ({requests.length})
      </h2>
      <ul className="mt-3 divide-y divide-amber-200">
        {requests.map((r) => (
          <li key={r.id} className="flex flex-wrap items-center justify-between gap-3 py-2 text-sm">
            <span>
              <strong>{r.patientName}</strong> · visit{" "}
              <Link
                to={`/schedule/appointments/${r.appointmentId}`}
                className="font-semibold text-accent-700 underline underline-offset-4"
              >
                {r.visitAt}
              </Link>{" "}
              · asked {r.askedAt}: “{r.message}”
            </span>
            <Form method="post">
              <input type="hidden" name="intent" value="settle-move-request" />
              <input type="hidden" name="requestId" value={r.id} />
              <Button type="submit" variant="secondary" className="px-3 py-1">
                Mark as dealt with<span className="sr-only"> for {r.patientName}</span>
              </Button>
            </Form>
          </li>
        ))}
      </ul>
    </section>
  );
}
