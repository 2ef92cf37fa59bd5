import {
  createColumnHelper,
  flexRender,
  getCoreRowModel,
  useReactTable,
  type SortingState,
} from "@tanstack/react-table";
import { Form, Link, useSearchParams } from "react-router";
import type { Route } from "./+types/index";
import { PatientSearch } from "~/components/patient-search";
import { PageHeader } from "~/components/page-header";
import { buttonClass } from "~/components/ui/button";
import { Icon } from "~/components/ui/icon";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { ageInYears, formatDate } from "~/lib/format";
import { listQuerySchema, type ListQuery, type PatientSort } from "~/models/patients/patient-schema";
import { listPatients } from "~/models/patients/patients.server";

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const query = listQuerySchema.parse(Object.fromEntries(new URL(request.url).searchParams));
  const { rows, total, totalIsExact } = await listPatients(query);
  return {
    query,
    total,
    totalIsExact,
    rows: rows.map((r) => ({ ...r, lastExamAt: r.lastExamAt?.toISOString() ?? null })),
  };
}

type Row = Awaited<ReturnType<typeof loader>>["rows"][number];
const col = createColumnHelper<Row>();

const columns = [
  col.accessor((r) => `${r.lastName}, ${r.firstName}`, {
    id: "name",
    header: "Name",
    cell: (c) => (
      <Link
        to={`/patients/${c.row.original.id}`}
        className="font-semibold text-accent-800 underline-offset-4 hover:underline"
      >
        {c.getValue()}
      </Link>
    ),
  }),
  col.accessor("dateOfBirth", {
    id: "dob",
    header: "Date of birth",
    cell: (c) => `${formatDate(c.getValue())} (${ageInYears(c.getValue())})`,
  }),
  col.accessor("phone", { header: "Phone", enableSorting: false, cell: (c) => c.getValue() ?? "—" }),
  col.accessor("email", { header: "E-mail", enableSorting: false, cell: (c) => c.getValue() ?? "—" }),
  col.accessor("lastExamAt", {
    id: "lastExam",
    header: "Last exam",
    cell: (c) => (c.getValue() ? formatDate(c.getValue()!) : "Never"),
  }),
];

function hrefWith(params: URLSearchParams, changes: Partial<Record<keyof ListQuery, string | number>>) {
  const next = new URLSearchParams(params);
  for (const [k, v] of Object.entries(changes)) next.set(k, String(v));
  return `?${next.toString()}`;
}

export default function Patients({ loaderData }: Route.ComponentProps) {
  const { query, rows, total, totalIsExact } = loaderData;
  const [params] = useSearchParams();
  const sorting: SortingState = [{ id: query.sort, desc: query.dir === "desc" }];
  const table = useReactTable({
    data: rows,
    columns,
    getCoreRowModel: getCoreRowModel(),
    manualSorting: true,
    manualPagination: true,
    manualFiltering: true,
    rowCount: total,
    state: { sorting, pagination: { pageIndex: query.page - 1, pageSize: query.size } },
  });
  const pages = Math.max(1, Math.ceil(total / query.size)) + (totalIsExact ? 0 : 1);
  const first = total ? (query.page - 1) * query.size + 1 : 0;
  const last = Math.min(total, query.page * query.size);

  return (
    <>
      <PageHeader
        title="Patients"
        description="Everyone registered with the practice."
        actions={
          <Link to="/patients/new" className={buttonClass("primary")}>
            Register a patient
          </Link>
        }
      />
      <div className="mb-6 max-w-xl">
        <PatientSearch />
      </div>
      <Form method="get" className="mb-4 flex flex-wrap items-end gap-4" aria-label="Filter the table">
        <input type="hidden" name="sort" value={query.sort} />
        <input type="hidden" name="dir" value={query.dir} />
        <div>
          <label htmlFor="table-q" className="mb-1 block text-sm font-semibold">
            Filter by name, phone or e-mail
          </label>
          <input
            id="table-q"
            type="search"
            name="q"
            defaultValue={query.q}
            className="block w-64 rounded-md border border-line bg-white px-3 py-2"
          />
        </div>
        <div>
          <label htmlFor="table-filter" className="mb-1 block text-sm font-semibold">
            Show
          </label>
          <select
            id="table-filter"
            name="filter"
            defaultValue={query.filter}
            className="block rounded-md border border-line bg-white px-3 py-2"
          >
            <option value="all">All patients</option>
            <option value="due">No exam for 24 months or more</option>
            <option value="never">Never examined</option>
          </select>
        </div>
        <div>
          <label htmlFor="table-size" className="mb-1 block text-sm font-semibold">
            Rows per page
          </label>
          <select
            id="table-size"
            name="size"
            defaultValue={String(query.size)}
            className="block rounded-md border border-line bg-white px-3 py-2"
          >
            {[10, 25, 50, 100].map((n) => (
              <option key={n}>{n}</option>
            ))}
          </select>
        </div>
        <button type="submit" className={buttonClass("secondary")}>
          Apply
        </button>
      </Form>
      <div className="overflow-x-auto rounded-lg border border-line bg-white">
        <table className="min-w-full text-left text-sm">
          <caption className="sr-only">
            Patients, sorted by {query.sort} {query.dir === "asc" ? "ascending" : "descending"}
          </caption>
          <thead className="border-b border-line bg-canvas">
            {table.getHeaderGroups().map((hg) => (
              <tr key={hg.id}>
                {hg.headers.map((h) => {
                  const sortable = h.column.getCanSort();
                  const current = query.sort === h.column.id;
                  const nextDir = current && query.dir === "asc" ? "desc" : "asc";
                  return (
                    <th
                      key={h.id}
                      scope="col"
                      aria-sort={current ? (query.dir === "asc" ? "ascending" : "descending") : undefined}
                      className="px-4 py-3 font-semibold"
                    >
                      {sortable ? (
                        <Link
                          to={hrefWith(params, { sort: h.column.id as PatientSort, dir: nextDir, page: 1 })}
                          className="inline-flex items-center gap-1 hover:underline"
                        >
                          {flexRender(h.column.columnDef.header, h.getContext())}
                          <span aria-hidden="true">{current ? (query.dir === "asc" ? "▲" : "▼") : "↕"}</span>
                          <span className="sr-only">
                            {current ? `, sorted ${query.dir === "asc" ? "ascending" : "descending"}; ` : ""}sort{" "}
                            {nextDir === "asc" ? "ascending" : "descending"}
                          </span>
                        </Link>
                      ) : (
                        flexRender(h.column.columnDef.header, h.getContext())
                      )}
                    </th>
                  );
                })}
              </tr>
            ))}
          </thead>
          <tbody>
            {table.getRowModel().rows.map((row) => (
              <tr key={row.id} className="border-b border-line last:border-0 hover:bg-canvas/60">
                {row.getVisibleCells().map((cell) => (
                  <td key={cell.id} className="px-4 py-3">
                    {flexRender(cell.column.columnDef.cell, cell.getContext())}
                  </td>
                ))}
              </tr>
            ))}
            {!rows.length ? (
              <tr>
                <td colSpan={columns.length} className="px-4 py-8 text-center text-muted">
                  <Icon name="info" className="mr-2 inline size-4" />
                  No patients match these filters.
                </td>
              </tr>
            ) : null}
          </tbody>
        </table>
      </div>
      <nav aria-label="Pages" className="mt-4 flex flex-wrap items-center justify-between gap-4 text-sm">
        <p>
          {first}–{last} of{" "}
          {totalIsExact ? total.toLocaleString("en-GB") : `more than ${total.toLocaleString("en-GB")}`} · page{" "}
          {query.page}
          {totalIsExact ? ` of ${pages.toLocaleString("en-GB")}` : ""}
        </p>
        <div className="flex gap-2">
          {query.page > 1 ? (
            <Link to={hrefWith(params, { page: query.page - 1 })} className={buttonClass("secondary")} rel="prev">
              Previous page
            </Link>
          ) : null}
          {query.page < pages ? (
            <Link to={hrefWith(params, { page: query.page + 1 })} className={buttonClass("secondary")} rel="next">
              Next page
            </Link>
          ) : null}
        </div>
      </nav>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Patients · Dioptra" }];
