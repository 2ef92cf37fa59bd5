import { TabNav } from "~/components/tab-nav";
import { StatusBadge } from "~/components/ui/notice";

const STATUS: Record<string, { tone: "info" | "success" | "warning" | "error"; word: string }> = {
  draft: { tone: "info", word: "Draft" },
  open: { tone: "warning", word: "Open" },
  partially_paid: { tone: "warning", word: "Part paid" },
  paid: { tone: "success", word: "Paid" },
  void: { tone: "error", word: "Void" },
};

export function InvoiceStatusBadge({ status }: { status: string }) {
  const s = STATUS[status] ?? { tone: "info" as const, word: status };
  return <StatusBadge tone={s.tone}>{s.word}</StatusBadge>;
}

const PAYMENT: Record<string, { tone: "info" | "success" | "warning" | "error"; word: string }> = {
  pending: { tone: "info", word: "Waiting for Stripe" },
  succeeded: { tone: "success", word: "Received" },
  failed: { tone: "error", word: "Not completed" },
  flagged: { tone: "error", word: "Flagged — not accepted" },
};

export function PaymentStatusBadge({ status }: { status: string }) {
  const s = PAYMENT[status] ?? { tone: "info" as const, word: status };
  return <StatusBadge tone={s.tone}>{s.word}</StatusBadge>;
}

const BILLING_TABS = [
  { to: "/billing", label: "Invoices", end: true },
  { to: "/billing/invoices/new", label: "New invoice", end: true },
  { to: "/billing/takings", label: "Takings" },
  { to: "/billing/balances", label: "Outstanding balances" },
];

export function BillingNav() {
  return <TabNav label="Billing" tabs={BILLING_TABS} />;
}
