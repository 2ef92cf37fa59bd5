import { createColumnHelper } from "@tanstack/react-table";
import { Form, Link } from "react-router";
import type { Route } from "./+types/index";
import { PatientSearch } from "~/components/patient-search";
import { PageHeader } from "~/components/page-header";
import { buttonClass } from "~/components/ui/button";
import { DataTable } from "~/components/data-table";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { ageInYears, formatDate } from "~/lib/format";
import { listQuerySchema } from "~/models/patients/patient-schema";
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

export default function Patients({ loaderData }: Route.ComponentProps) {
  const { query, rows, total, totalIsExact } = loaderData;
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
      <DataTable
        data={rows}
        columns={columns}
        getRowId={(r) => r.id}
        caption="Patients"
        empty="No patients match these filters."
        sort={{ sort: query.sort, dir: query.dir }}
        paging={{ page: query.page, pageSize: query.size, total, totalIsExact, noun: ["patient", "patients"] }}
        className="rounded-lg border border-line bg-white px-4 py-2"
      />
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Patients · Dioptra" }];
