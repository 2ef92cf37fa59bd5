/** Parts of the order page: what was ordered, its history, the lensmeter check report and reading fields. */
import { createColumnHelper } from "@tanstack/react-table";
import { DataTable } from "~/components/data-table";
import { ErrorList } from "~/components/forms";
import { Input, Select } from "~/components/ui/input";
import { StatusBadge } from "~/components/ui/notice";
import type { Route } from "./+types/order";
import { Form, Link } from "react-router";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { formatDate, formatMoney } from "~/lib/format";
import { formatRx, type PairReport } from "~/lib/optics";
import { LENS_TYPE_LABEL, STATE_LABEL, type OrderStateName } from "~/lib/orders/states";

export const tone = (s: OrderStateName) =>
  s === "cancelled" || s === "remake" ? "warning" : s === "ready_to_collect" || s === "collected" ? "success" : "info";

export function CheckReport({ report }: { report: PairReport }) {
  const rows: CheckRow[] = [
    ...(["right", "left"] as const).flatMap((side) =>
      report[side].checks.map((c) => ({
        key: `${side}-${c.element}`,
        what: `${side === "right" ? "Right" : "Left"} ${c.element}`,
        ordered: String(c.ordered),
        measured: String(c.measured),
        off: String(c.difference),
        tol: c.tolerance === null ? "—" : `±${c.tolerance}${c.element === "axis" ? "°" : " D"}`,
        pass: c.pass,
        rule: c.rule,
      })),
    ),
    ...report.pair.map((c) => ({
      key: c.element,
      what: `Pair: ${c.element}`,
      ordered: "",
      measured: "",
      off: `${c.difference} ${c.unit}`,
      tol: `${c.tolerance} ${c.unit}`,
      pass: c.pass,
      rule: c.rule,
    })),
  ];
  return (
    <DataTable
      data={rows}
      columns={checkColumns}
      getRowId={(r) => r.key}
      caption="Dispensing check, element by element"
      empty="Nothing was checked."
    />
  );
}

type CheckRow = {
  key: string;
  what: string;
  ordered: string;
  measured: string;
  off: string;
  tol: string;
  pass: boolean;
  rule: string;
};
const checkCol = createColumnHelper<CheckRow>();
const checkColumns = [
  checkCol.accessor("what", { header: "Element" }),
  checkCol.accessor("ordered", { header: "Ordered" }),
  checkCol.accessor("measured", { header: "Measured" }),
  checkCol.accessor("off", { header: "Off by" }),
  checkCol.accessor("tol", { header: "Allowed" }),
  checkCol.accessor("pass", {
    header: "Result",
    cell: (c) =>
      c.getValue() ? <StatusBadge tone="success">Within</StatusBadge> : <StatusBadge tone="error">Outside</StatusBadge>,
  }),
  checkCol.accessor("rule", { header: "Rule", meta: { className: "text-muted" } }),
];

export function EyeReadingFields({ side, errors }: { side: "right" | "left"; errors: Record<string, string[]> }) {
  const label = side === "right" ? "Right" : "Left";
  const f = (name: string) => `${side}.${name}`;
  const err = (name: string) => errors[f(name)];
  const input = (name: string, text: string, hint?: string) => (
    <div>
      <label htmlFor={`check-${side}-${name}`} className="mb-1 block text-sm font-semibold">
        {text}
      </label>
      <Input
        id={`check-${side}-${name}`}
        name={f(name)}
        type="text"
        aria-invalid={err(name) ? true : undefined}
        aria-describedby={
          [hint ? `check-${side}-${name}-hint` : "", err(name) ? `check-${side}-${name}-error` : ""]
            .filter(Boolean)
            .join(" ") || undefined
        }
      />
      {hint ? (
        <p id={`check-${side}-${name}-hint`} className="mt-1 text-xs text-muted">
          {hint}
        </p>
      ) : null}
      <ErrorList id={`check-${side}-${name}-error`} errors={err(name)} />
    </div>
  );
  const base = (name: string, text: string, options: string[]) => (
    <div>
      <label htmlFor={`check-${side}-${name}`} className="mb-1 block text-sm font-semibold">
        {text}
      </label>
      <Select
        id={`check-${side}-${name}`}
        name={f(name)}
        aria-invalid={err(name) ? true : undefined}
        aria-describedby={err(name) ? `check-${side}-${name}-error` : undefined}
      >
        <option value="">—</option>
        {options.map((o) => (
          <option key={o} value={o}>
            {o}
          </option>
        ))}
      </Select>
      <ErrorList id={`check-${side}-${name}-error`} errors={err(name)} />
    </div>
  );
  return (
    <fieldset className="grid gap-3 sm:grid-cols-4">
      <legend className="mb-2 font-semibold">{label} lens</legend>
      <div className="sm:col-span-2">
        {input("rx", `${label} lensmeter reading`, "Sphere, cylinder and axis, e.g. -2.25 -0.75 x 175.")}
      </div>
      {input("add", `${label} add`)}
      <div />
      {input("horizontalPrism", `${label} horizontal prism (Δ)`)}
      {base("horizontalBase", `${label} horizontal base`, ["in", "out"])}
      {input("verticalPrism", `${label} vertical prism (Δ)`)}
      {base("verticalBase", `${label} vertical base`, ["up", "down"])}
      {input("pdMm", `${label} centre from bridge (mm)`, "Optional: where the optical centre was found.")}
      {input("heightMm", `${label} centre height (mm)`)}
    </fieldset>
  );
}

type OrderData = Route.ComponentProps["loaderData"];

/** What was ordered: the prescription, frame and lenses (or contact lenses), notes. */
export function OrderSummary({ d }: { d: OrderData }) {
  return (
    <Card title="Order">
      <dl className="grid gap-x-6 gap-y-2 text-sm sm:grid-cols-2">
        <div>
          <dt className="font-semibold">Prescription</dt>
          <dd>
            {d.rx.eyes.map((e) => (
              <span key={e.eye} className="block">
                {e.eye === "right" ? "R" : "L"} {formatRx(e)}
                {e.addPower ? ` add +${e.addPower.toFixed(2)}` : ""}
                {e.prismDioptres ? ` · ${e.prismDioptres.toFixed(2)} Δ base ${e.prismBase}` : ""}
              </span>
            ))}
            <span className="text-muted">
              Issued {formatDate(d.rx.issuedAt.slice(0, 10))}, valid until {formatDate(d.rx.expiresOn)}
            </span>
          </dd>
        </div>
        {d.order.kind === "spectacles" ? (
          <>
            <div>
              <dt className="font-semibold">Frame</dt>
              <dd>{d.order.frameLabel}</dd>
            </div>
            <div>
              <dt className="font-semibold">Lenses</dt>
              <dd>
                {d.order.lensType ? LENS_TYPE_LABEL[d.order.lensType] : ""}, {d.order.lensMaterial}
                {d.order.coatings.length ? `; ${d.order.coatings.join(", ")}` : ""}
                {d.order.tint ? `; tint ${d.order.tint}` : ""}
              </dd>
            </div>
            <div>
              <dt className="font-semibold">Monocular PDs and heights</dt>
              <dd>
                R {d.order.pdRightMm} mm{d.order.heightRightMm ? ` / ${d.order.heightRightMm} mm` : ""} · L{" "}
                {d.order.pdLeftMm} mm{d.order.heightLeftMm ? ` / ${d.order.heightLeftMm} mm` : ""}
              </dd>
            </div>
          </>
        ) : (
          <div>
            <dt className="font-semibold">Lens and boxes</dt>
            <dd>
              {d.rx.lensName} · right {d.order.boxesRight}, left {d.order.boxesLeft}
            </dd>
          </div>
        )}
        {d.order.notes ? (
          <div>
            <dt className="font-semibold">Notes</dt>
            <dd>{d.order.notes}</dd>
          </div>
        ) : null}
        {d.order.overrideReason ? (
          <div>
            <dt className="font-semibold">Released despite the check</dt>
            <dd>{d.order.overrideReason}</dd>
          </div>
        ) : null}
      </dl>
    </Card>
  );
}

/** The order's states over time, and the e-mails it caused. */
export function OrderHistory({ d }: { d: OrderData }) {
  return (
    <Card title="History">
      <ol className="space-y-2 text-sm">
        {d.events.map((e) => (
          <li key={e.id}>
            <span className="font-semibold">{STATE_LABEL[e.toState as OrderStateName]}</span> — {e.actor ?? "system"},{" "}
            {formatDate(e.at, { timeZone: d.timeZone, time: true })}
            {e.reason ? <span className="text-muted"> · {e.reason}</span> : null}
          </li>
        ))}
      </ol>
      {d.messages.length ? (
        <ul className="mt-4 space-y-1 text-sm">
          {d.messages.map((m) => (
            <li key={m.id}>
              {m.kind === "lab_order" ? "Order e-mail to the lab" : "Ready e-mail to the patient"}:{" "}
              <span className="font-semibold">{m.status}</span>
              {m.recipient ? ` (${m.recipient})` : ""}
              {m.skippedReason ? ` — ${m.skippedReason}` : ""}
              {m.lastError ? ` — last error: ${m.lastError}` : ""}
            </li>
          ))}
        </ul>
      ) : null}
    </Card>
  );
}

/** The order's invoice, or the button that raises it. */
export function OrderInvoice({ d, pending }: { d: OrderData; pending: boolean }) {
  return (
    <Card title="Invoice">
      {d.invoice ? (
        <p className="text-sm">
          <Link
            to={`/billing/invoices/${d.invoice.id}`}
            className="font-semibold text-accent-700 underline underline-offset-4"
          >
            {d.invoice.label}
          </Link>{" "}
          · {formatMoney(d.invoice.totalMinor, d.currency)} · paid {formatMoney(d.invoice.paidMinor, d.currency)} ·{" "}
          {d.invoice.status.replace("_", " ")}
        </p>
      ) : (
        <Form method="post">
          <input type="hidden" name="intent" value="raise-invoice" />
          <p className="mb-2 text-sm">No invoice yet.</p>
          <Button type="submit" variant="secondary" pending={pending}>
            Raise the invoice
          </Button>
        </Form>
      )}
    </Card>
  );
}
