/** The new-invoice page's fee schedule: one row a fee, with the quantity to put on the invoice. */
import { createColumnHelper } from "@tanstack/react-table";
import { DataTable } from "~/components/data-table";
import { ErrorList } from "~/components/forms";
import { Input } from "~/components/ui/input";
import { formatMoney } from "~/lib/format";

export type FeeRow = {
  id: string;
  code: string;
  description: string;
  priceMinor: number;
  taxCategory: "standard" | "exempt";
};

type Props = {
  fees: FeeRow[];
  currency: string;
  caption: string;
  empty: string;
  /** The fee proposed with a quantity of one, and what the page calls it. */
  suggested: { id: string | null; note: string };
  errors: Partial<Record<string, string[]>>;
};

const col = createColumnHelper<FeeRow>();

export function FeeTable({ fees, currency, caption, empty, suggested, errors }: Props) {
  const columns = [
    col.accessor("code", { header: "Code", meta: { className: "font-mono" } }),
    col.accessor("description", {
      header: "Description",
      cell: ({ row: { original: f } }) => (
        <>
          {f.description}
          {f.taxCategory === "standard" ? <span className="ml-2 text-xs text-muted">(taxed)</span> : null}
          {suggested.id === f.id ? (
            <span className="ml-2 text-xs font-semibold text-accent-800">· {suggested.note}</span>
          ) : null}
        </>
      ),
    }),
    col.accessor("priceMinor", {
      header: "Price",
      meta: { align: "right" },
      cell: (c) => formatMoney(c.getValue(), currency),
    }),
    col.display({
      id: "quantity",
      header: "Quantity",
      meta: { className: "w-28" },
      cell: ({ row: { original: f } }) => (
        <>
          <label htmlFor={`qty_${f.id}`} className="sr-only">
            Quantity of {f.description}
          </label>
          <Input
            id={`qty_${f.id}`}
            name={`qty_${f.id}`}
            type="number"
            min={0}
            max={1000}
            defaultValue={suggested.id === f.id ? 1 : 0}
            className="w-24 py-1"
            aria-invalid={errors[`qty_${f.id}`] ? true : undefined}
          />
          <ErrorList errors={errors[`qty_${f.id}`]} />
        </>
      ),
    }),
  ];
  return <DataTable data={fees} columns={columns} getRowId={(f) => f.id} caption={caption} empty={empty} />;
}
