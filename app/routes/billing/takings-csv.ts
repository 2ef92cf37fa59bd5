import { dateTimeFormat } from "~/lib/format/intl";
import type { Route } from "./+types/takings-csv";
import { BILLING_ROLES, invoiceLabel, practiceBilling } from "~/models/billing/invoices.server";
import { parsePeriod, takings, todayIn } from "~/models/billing/takings.server";
import { minorToDecimal } from "~/lib/money";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";

/** RFC 4180 field; text starting with =, +, - or @ is prefixed so a spreadsheet never runs it as a formula (plain numbers pass). */
export function csvField(value: string) {
  const safe = /^[=+\-@\t\r]/.test(value) && !/^-?\d+(\.\d+)?$/.test(value) ? `'${value}` : value;
  return /[",\r\n]/.test(safe) ? `"${safe.replace(/"/g, '""')}"` : safe;
}

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, BILLING_ROLES);
  const practice = await practiceBilling();
  const period = parsePeriod(new URL(request.url).searchParams, todayIn(practice.timeZone));
  const t = await takings(period);
  const date = dateTimeFormat("en-CA", {
    timeZone: t.timeZone,
    year: "numeric",
    month: "2-digit",
    day: "2-digit",
  });
  const time = dateTimeFormat("en-GB", {
    timeZone: t.timeZone,
    hour: "2-digit",
    minute: "2-digit",
    hour12: false,
  });
  const rows = [
    ["date", "time", "kind", "status", "method", "invoice", "patient", "amount", "currency", "reference"],
    ...t.entries.map((e) => [
      date.format(e.at),
      time.format(e.at),
      e.kind,
      e.status,
      e.method,
      invoiceLabel(e.invoiceNumber),
      e.patient,
      e.status === "flagged" ? "0.00" : minorToDecimal(e.amountMinor, t.currency),
      t.currency,
      e.reference,
    ]),
    ...t.byMethod.map((m) => [
      "",
      "",
      "total",
      "",
      m.method,
      "",
      "",
      minorToDecimal(m.netMinor, t.currency),
      t.currency,
      `received ${minorToDecimal(m.receivedMinor, t.currency)}; refunded ${minorToDecimal(m.refundedMinor, t.currency)}`,
    ]),
    ["", "", "total", "", "all", "", "", minorToDecimal(t.totals.netMinor, t.currency), t.currency, ""],
  ];
  const body = rows.map((r) => r.map((v) => csvField(String(v))).join(",")).join("\r\n") + "\r\n";
  const name = period.kind === "day" ? period.day : period.month;
  await audit({ action: "billing.takings_exported", actorUserId: user.id, detail: { period: name }, request });
  return new Response(body, {
    headers: {
      "content-type": "text/csv; charset=utf-8",
      "content-disposition": `attachment; filename="takings-${name}.csv"`,
      "cache-control": "private, no-store",
    },
  });
}
