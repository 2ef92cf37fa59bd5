/**
 * The one table of the app, on @tanstack/react-table. Paging and sorting happen on the server:
 * the table only reads the current page and order from the loader and links to the next ones
 * through the URL's search parameters, so every state can be bookmarked and works without script.
 * Headers are `<th scope="col">`; a sortable header is a link and carries `aria-sort`, and the
 * order is said in words (the arrows are decoration). A column marked `rowHeader` names its row
 * (`<th scope="row">`); columns with a `footer` add a totals row in `<tfoot>`.
 */
import { getCoreRowModel, useReactTable, type ColumnDef, type RowData, type SortingState } from "@tanstack/react-table";
import type { ReactNode } from "react";
import { Link, useSearchParams } from "react-router";
import { buttonClass } from "~/components/ui/button";
import { Icon } from "~/components/ui/icon";

declare module "@tanstack/react-table" {
  // eslint-disable-next-line @typescript-eslint/no-unused-vars -- the generics must match the library's declaration
  interface ColumnMeta<TData extends RowData, TValue> {
    /** Numbers and money: right-aligned, tabular figures. */
    align?: "right";
    /** Extra classes for the column's cells. */
    className?: string;
    /** The column names its row: its cells are `<th scope="row">`. */
    rowHeader?: boolean;
  }
}

export type SortDirection = "asc" | "desc";

/** The server's current order, as read from `?sort=…&dir=…`; `sort: null` is the list's own order (still sortable). */
export type TableSort = { sort: string | null; dir: SortDirection };

/** The server's current page, as read from `?page=…`; `page` counts from 1. */
export type TablePaging = {
  page: number;
  pageSize: number;
  total: number;
  /** False when `total` is a lower bound (a capped count): one more page is offered. */
  totalIsExact?: boolean;
  /** What a row is, for the count: "invoice" → "3 invoices". */
  noun?: [singular: string, plural: string];
};

export type DataTableProps<T> = {
  data: T[];
  // eslint-disable-next-line @typescript-eslint/no-explicit-any -- columns of mixed value types, as the library types them
  columns: ColumnDef<T, any>[];
  /** Said before the table; hidden from sight unless `captionVisible`. */
  caption?: string;
  captionVisible?: boolean;
  /** Shown in place of the rows when there are none. */
  empty: ReactNode;
  getRowId?: (row: T) => string;
  sort?: TableSort;
  paging?: TablePaging;
  /** The search parameters that carry page, sort and direction. */
  params?: { page?: string; sort?: string; dir?: string };
  /** Extra classes for a row (e.g. to dim withdrawn items; never the only signal). */
  rowClassName?: (row: T) => string | undefined;
  /** Extra attributes for a row's `<tr>` (e.g. `data-*` hooks that browser tests and scripts find rows by). */
  rowAttributes?: (row: T) => Record<`data-${string}`, string>;
  /** The column headers are read by screen readers but not shown (a list whose rows say what they are). */
  headerHidden?: boolean;
  className?: string;
  /** For browser tests: the table element's `data-testid`. */
  testId?: string;
};

/**
 * A header, cell or footer of a column: a function is called, not mounted as a component, so
 * columns built during render (closing over the page's state) keep their inputs' typed values
 * and focus from one render to the next. A cell that needs hooks returns a component's element.
 */
function renderPart<P extends object>(part: ReactNode | ((props: P) => ReactNode) | undefined, props: P): ReactNode {
  return typeof part === "function" ? part(props) : part;
}

const words = (dir: SortDirection) => (dir === "asc" ? "ascending" : "descending");

export function hrefWith(params: URLSearchParams, changes: Record<string, string | number>) {
  const next = new URLSearchParams(params);
  for (const [k, v] of Object.entries(changes)) next.set(k, String(v));
  return `?${next.toString()}`;
}

export function DataTable<T>({
  data,
  columns,
  caption,
  captionVisible = false,
  empty,
  getRowId,
  sort,
  paging,
  params: names = {},
  rowClassName,
  rowAttributes,
  headerHidden = false,
  className = "",
  testId,
}: DataTableProps<T>) {
  const [params] = useSearchParams();
  const pageParam = names.page ?? "page";
  const sortParam = names.sort ?? "sort";
  const dirParam = names.dir ?? "dir";
  const sorting: SortingState = sort?.sort ? [{ id: sort.sort, desc: sort.dir === "desc" }] : [];
  const table = useReactTable({
    data,
    columns,
    getRowId,
    getCoreRowModel: getCoreRowModel(),
    manualSorting: true,
    manualPagination: true,
    enableSorting: Boolean(sort),
    rowCount: paging?.total,
    state: {
      sorting,
      pagination: paging ? { pageIndex: paging.page - 1, pageSize: paging.pageSize } : { pageIndex: 0, pageSize: 1 },
    },
  });

  const captionText =
    caption && sort?.sort ? `${caption}, sorted by ${headerText(columns, sort.sort)} ${words(sort.dir)}` : caption;

  return (
    <div className={className}>
      <div className="overflow-x-auto">
        <table className="w-full text-left text-sm" data-testid={testId}>
          {captionText ? (
            <caption className={captionVisible ? "mb-2 text-left font-semibold" : "sr-only"}>{captionText}</caption>
          ) : null}
          <thead className={headerHidden ? "sr-only" : "border-b border-line text-muted"}>
            {table.getHeaderGroups().map((hg) => (
              <tr key={hg.id}>
                {hg.headers.map((h) => {
                  const meta = h.column.columnDef.meta;
                  const current = sort?.sort === h.column.id;
                  const nextDir: SortDirection = current && sort?.dir === "asc" ? "desc" : "asc";
                  const label = renderPart(h.column.columnDef.header, h.getContext());
                  return (
                    <th
                      key={h.id}
                      scope="col"
                      aria-sort={current && sort ? words(sort.dir) : undefined}
                      className={`py-2 pr-4 font-semibold ${meta?.align === "right" ? "text-right" : ""}`}
                    >
                      {sort && h.column.getCanSort() ? (
                        <Link
                          to={hrefWith(params, { [sortParam]: h.column.id, [dirParam]: nextDir, [pageParam]: 1 })}
                          className="inline-flex items-center gap-1 underline-offset-4 hover:underline"
                        >
                          {label}
                          <span aria-hidden="true">{current && sort ? (sort.dir === "asc" ? "▲" : "▼") : "↕"}</span>
                          <span className="sr-only">
                            {current && sort ? `, sorted ${words(sort.dir)}; ` : ""}sort {words(nextDir)}
                          </span>
                        </Link>
                      ) : (
                        label
                      )}
                    </th>
                  );
                })}
              </tr>
            ))}
          </thead>
          <tbody className="divide-y divide-line">
            {table.getRowModel().rows.map((row) => (
              <tr
                key={row.id}
                className={`align-top ${rowClassName?.(row.original) ?? ""}`}
                {...rowAttributes?.(row.original)}
              >
                {row.getVisibleCells().map((cell) => {
                  const meta = cell.column.columnDef.meta;
                  const Cell = meta?.rowHeader ? "th" : "td";
                  return (
                    <Cell
                      key={cell.id}
                      scope={meta?.rowHeader ? "row" : undefined}
                      className={`py-3 pr-4 ${meta?.rowHeader ? "font-semibold" : ""} ${meta?.align === "right" ? "text-right tabular-nums" : ""} ${meta?.className ?? ""}`}
                    >
                      {renderPart(cell.column.columnDef.cell, cell.getContext())}
                    </Cell>
                  );
                })}
              </tr>
            ))}
            {data.length === 0 ? (
              <tr>
                <td colSpan={table.getVisibleLeafColumns().length} className="py-6 text-center text-muted">
                  <Icon name="info" className="mr-2 inline size-4" />
                  {empty}
                </td>
              </tr>
            ) : null}
          </tbody>
          {data.length && columns.some((c) => c.footer !== undefined) ? (
            <tfoot className="border-t border-line font-semibold">
              {table.getFooterGroups().map((fg) => (
                <tr key={fg.id}>
                  {fg.headers.map((h) => {
                    const meta = h.column.columnDef.meta;
                    const Cell = meta?.rowHeader ? "th" : "td";
                    return (
                      <Cell
                        key={h.id}
                        scope={meta?.rowHeader ? "row" : undefined}
                        className={`py-3 pr-4 ${meta?.align === "right" ? "text-right tabular-nums" : ""}`}
                      >
                        {h.isPlaceholder ? null : renderPart(h.column.columnDef.footer, h.getContext())}
                      </Cell>
                    );
                  })}
                </tr>
              ))}
            </tfoot>
          ) : null}
        </table>
      </div>
      {paging ? <Pager paging={paging} params={params} pageParam={pageParam} /> : null}
    </div>
  );
}

// eslint-disable-next-line @typescript-eslint/no-explicit-any -- see DataTableProps.columns
function headerText<T>(columns: ColumnDef<T, any>[], id: string): string {
  const c = columns.find((c) => c.id === id || ("accessorKey" in c && c.accessorKey === id));
  return typeof c?.header === "string" ? c.header.toLowerCase() : id;
}

/** Previous and next page links with "1–25 of 300" (the table's own pager, for lists that are not tables). */
export function Pager({
  paging,
  params,
  pageParam,
}: {
  paging: TablePaging;
  params: URLSearchParams;
  pageParam: string;
}) {
  const { page, pageSize, total, totalIsExact = true, noun } = paging;
  const pages = Math.max(1, Math.ceil(total / pageSize)) + (totalIsExact ? 0 : 1);
  const first = total ? (page - 1) * pageSize + 1 : 0;
  const last = Math.min(total, page * pageSize);
  const count = totalIsExact ? total.toLocaleString("en-GB") : `more than ${total.toLocaleString("en-GB")}`;
  const nouns = noun ? ` ${total === 1 && totalIsExact ? noun[0] : noun[1]}` : "";
  // A page number past the end (an old link, a shrunk filter) says so and leads to the last page.
  const pastEnd = totalIsExact && page > pages;
  return (
    <nav aria-label="Pages" className="mt-4 flex flex-wrap items-center justify-between gap-4 text-sm">
      {pastEnd ? (
        <p className="text-muted">
          Page {page} is past the end: {count}
          {nouns} fill {pages.toLocaleString("en-GB")} {pages === 1 ? "page" : "pages"}.
        </p>
      ) : (
        <p className="text-muted">
          {first}–{last} of {count}
          {nouns} · page {page}
          {totalIsExact ? ` of ${pages.toLocaleString("en-GB")}` : ""}
        </p>
      )}
      <div className="flex gap-2">
        {pastEnd ? (
          <Link to={hrefWith(params, { [pageParam]: pages })} className={buttonClass("secondary")}>
            Last page ({pages.toLocaleString("en-GB")})
          </Link>
        ) : page > 1 ? (
          <Link to={hrefWith(params, { [pageParam]: page - 1 })} className={buttonClass("secondary")} rel="prev">
            Previous page
          </Link>
        ) : null}
        {page < pages ? (
          <Link to={hrefWith(params, { [pageParam]: page + 1 })} className={buttonClass("secondary")} rel="next">
            Next page
          </Link>
        ) : null}
      </div>
    </nav>
  );
}
