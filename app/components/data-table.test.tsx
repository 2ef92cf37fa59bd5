// @vitest-environment jsdom
import { cleanup, render, screen } from "@testing-library/react";
import { createMemoryRouter, RouterProvider } from "react-router";
import { afterEach, describe, expect, it } from "vitest";
import { Pager, type TablePaging } from "./data-table";

afterEach(cleanup);

function renderPager(paging: TablePaging, search = "") {
  const router = createMemoryRouter(
    [
      {
        path: "/patients",
        element: <Pager paging={paging} params={new URLSearchParams(search)} pageParam="page" />,
      },
    ],
    { initialEntries: [`/patients${search}`] },
  );
  render(<RouterProvider router={router} />);
}

describe("the table's pager", () => {
  it("says which rows a page holds and offers the pages either side", () => {
    renderPager({ page: 2, pageSize: 25, total: 438, noun: ["patient", "patients"] }, "?sort=dob&page=2");
    expect(screen.getByRole("navigation", { name: "Pages" }).textContent).toContain(
      "26–50 of 438 patients · page 2 of 18",
    );
    expect(screen.getByRole("link", { name: "Previous page" }).getAttribute("href")).toBe("/patients?sort=dob&page=1");
    expect(screen.getByRole("link", { name: "Next page" }).getAttribute("href")).toBe("/patients?sort=dob&page=3");
  });

  it("says a page past the end is past the end and leads to the last page, not to rows 976–438", () => {
    renderPager({ page: 40, pageSize: 25, total: 438, noun: ["patient", "patients"] }, "?sort=dob&page=40");
    const nav = screen.getByRole("navigation", { name: "Pages" });
    expect(nav.textContent).toContain("Page 40 is past the end: 438 patients fill 18 pages.");
    expect(nav.textContent).not.toContain("976");
    expect(screen.getByRole("link", { name: "Last page (18)" }).getAttribute("href")).toBe(
      "/patients?sort=dob&page=18",
    );
    expect(screen.queryByRole("link", { name: "Next page" })).toBeNull();
  });

  it("keeps paging on when the count is only a lower bound", () => {
    renderPager({ page: 5, pageSize: 25, total: 375, totalIsExact: false }, "?page=5");
    expect(screen.getByRole("navigation", { name: "Pages" }).textContent).toContain("101–125 of more than 375");
    expect(screen.getByRole("link", { name: "Next page" })).toBeTruthy();
  });
});
