import { useCallback, useEffect, useMemo, useReducer, useRef, useState } from "react";
import {
  flexRender,
  getCoreRowModel,
  useReactTable,
  type ColumnDef,
  type SortingState,
} from "@tanstack/react-table";
import { useVirtualizer } from "@tanstack/react-virtual";
import type { ColumnMeta } from "~/shared/datasets";

const PAGE = 200;
const ROW_HEIGHT = 28;

interface Window {
  total: number;
  offset: number;
  rowNumbers: number[];
  rows: string[][];
}

type Row = { n: number; cells: string[] | null };

/**
 * The preview: a virtualized table over every row of the version. Rows arrive from the server
 * in windows of 200 as they scroll into view; sorting (one column, missing values last) is done
 * on the server, so 200 000 rows stay smooth.
 */
export function PreviewTable({
  rowsUrl,
  columns,
  total,
  masked = [],
}: {
  rowsUrl: string;
  columns: ColumnMeta[];
  total: number;
  masked?: string[];
}) {
  const [sorting, setSorting] = useState<SortingState>([]);
  const pages = useRef(new Map<number, Window | "loading">());
  const [tick, refresh] = useReducer((n: number) => n + 1, 0);
  const [error, setError] = useState<string | null>(null);
  const sortKey = sorting[0]
    ? `&sort=${encodeURIComponent(sorting[0].id)}&desc=${sorting[0].desc ? 1 : 0}`
    : "";
  const parentRef = useRef<HTMLDivElement>(null);

  // Rows are fetched again when the sort changes or when a screen decision unmasks a column.
  const maskKey = masked.join("\u0000");
  useEffect(() => {
    pages.current = new Map();
    refresh();
  }, [sortKey, maskKey]);

  const load = useCallback(
    (page: number) => {
      if (pages.current.has(page)) return;
      pages.current.set(page, "loading");
      const map = pages.current;
      fetch(`${rowsUrl}?offset=${page * PAGE}&limit=${PAGE}${sortKey}`, {
        headers: { Accept: "application/json" },
      })
        .then(async (res) => {
          if (!res.ok) throw new Error(`The rows could not be loaded (${res.status}).`);
          const w = (await res.json()) as Window;
          if (map === pages.current) {
            map.set(page, w);
            refresh();
          }
        })
        .catch((e: Error) => {
          map.delete(page);
          setError(e.message);
        });
    },
    // maskKey: a new callback makes the page effect below fetch the visible pages again.
    // eslint-disable-next-line react-hooks/exhaustive-deps
    [rowsUrl, sortKey, maskKey],
  );

  const virtualizer = useVirtualizer({
    count: total,
    getScrollElement: () => parentRef.current,
    estimateSize: () => ROW_HEIGHT,
    overscan: 20,
  });
  const items = virtualizer.getVirtualItems();
  const firstPage = items.length > 0 ? Math.floor(items[0].index / PAGE) : 0;
  const lastPage = items.length > 0 ? Math.floor(items[items.length - 1].index / PAGE) : 0;
  useEffect(() => {
    for (let p = firstPage; p <= lastPage; p++) load(p);
  }, [firstPage, lastPage, load]);

  // Only the rows in view go through the table model; the array keeps its identity until the
  // window or the loaded pages change (a new array each render would loop the table's updates).
  const firstIndex = items[0]?.index ?? 0;
  const lastIndex = items[items.length - 1]?.index ?? -1;
  const visible: Row[] = useMemo(() => {
    const out: Row[] = [];
    for (let index = firstIndex; index <= lastIndex; index++) {
      const page = pages.current.get(Math.floor(index / PAGE));
      if (!page || page === "loading") out.push({ n: index + 1, cells: null });
      else out.push({ n: page.rowNumbers[index - page.offset], cells: page.rows[index - page.offset] });
    }
    return out;
    // eslint-disable-next-line react-hooks/exhaustive-deps -- pages is a ref; tick marks its changes
  }, [firstIndex, lastIndex, tick, sortKey, maskKey]);

  const defs = useMemo<ColumnDef<Row>[]>(
    () => [
      { id: "__row", header: "Row", enableSorting: false, cell: ({ row }) => row.original.n },
      ...columns.map<ColumnDef<Row>>((c, j) => ({
        id: c.name,
        // An accessor makes the column sortable; the sorting itself happens on the server.
        accessorFn: (row) => row.cells?.[j] ?? "",
        // A masked column (flagged by the identifier screen) is not sortable: the order would show its values.
        enableSorting: !masked.includes(c.name),
        // The label the file gives (Dataset-JSON, XPORT) under the name.
        header: () => (
          <span className="block" title={c.label ?? undefined}>
            {masked.includes(c.name) ? `${c.name} (masked)` : c.name}
            {c.label ? (
              <span className="block truncate text-[0.7rem] font-normal normal-case tracking-normal">
                {c.label}
              </span>
            ) : null}
          </span>
        ),
        meta: { numeric: c.type === "number" && !masked.includes(c.name) },
        cell: ({ row }) => (row.original.cells ? row.original.cells[j] : "…"),
      })),
    ],
    [columns, masked],
  );
  const table = useReactTable({
    data: visible,
    columns: defs,
    state: { sorting },
    onSortingChange: setSorting,
    manualSorting: true,
    autoResetAll: false,
    enableMultiSort: false,
    sortDescFirst: false,
    getCoreRowModel: getCoreRowModel(),
  });
  const widths = useMemo(
    () => ["4.5rem", ...columns.map((c) => (c.type === "number" ? "6.5rem" : "9rem"))],
    [columns],
  );
  const gridTemplate = widths.join(" ");
  const rows = table.getRowModel().rows;

  return (
    <div className="panel">
      {error ? (
        <p role="alert" className="px-3 py-2 text-sm text-finding">
          {error}
        </p>
      ) : null}
      <div
        ref={parentRef}
        className="h-[34rem] overflow-auto"
        tabIndex={0}
        aria-label="Rows of this dataset version; scroll to see more"
      >
        <div
          role="table"
          aria-label="Preview rows"
          aria-rowcount={total + 1}
          aria-colcount={columns.length + 1}
          className="min-w-max text-sm"
          style={{ fontVariantNumeric: "tabular-nums" }}
        >
          <div role="rowgroup" className="sticky top-0 z-10 bg-sheet">
            {table.getHeaderGroups().map((group) => (
              <div
                role="row"
                key={group.id}
                className="grid border-b border-ink/60"
                style={{ gridTemplateColumns: gridTemplate }}
              >
                {group.headers.map((header) => {
                  const sorted = header.column.getIsSorted();
                  const numeric = (header.column.columnDef.meta as { numeric?: boolean } | undefined)
                    ?.numeric;
                  return (
                    <div
                      role="columnheader"
                      key={header.id}
                      aria-sort={sorted === "asc" ? "ascending" : sorted === "desc" ? "descending" : "none"}
                      className={`truncate px-2 py-1.5 text-xs font-semibold uppercase tracking-wide text-ink-soft ${numeric ? "text-right" : ""}`}
                      title={
                        masked.includes(header.column.id)
                          ? "Masked until the identifier screen's hit on this column is resolved as not an identifier"
                          : undefined
                      }
                    >
                      {header.column.getCanSort() ? (
                        <button
                          type="button"
                          onClick={header.column.getToggleSortingHandler()}
                          className="uppercase hover:text-ink"
                          title={`Sort by ${header.column.id}`}
                        >
                          {flexRender(header.column.columnDef.header, header.getContext())}
                          <span aria-hidden="true">
                            {sorted === "asc" ? " ▲" : sorted === "desc" ? " ▼" : ""}
                          </span>
                        </button>
                      ) : (
                        flexRender(header.column.columnDef.header, header.getContext())
                      )}
                    </div>
                  );
                })}
              </div>
            ))}
          </div>
          <div role="rowgroup" style={{ height: virtualizer.getTotalSize(), position: "relative" }}>
            {rows.map((row, i) => {
              const item = items[i];
              return (
                <div
                  role="row"
                  aria-rowindex={item.index + 2}
                  key={item.key}
                  className="absolute left-0 grid w-full border-b border-rule"
                  style={{
                    gridTemplateColumns: gridTemplate,
                    height: ROW_HEIGHT,
                    transform: `translateY(${item.start}px)`,
                  }}
                >
                  {row.getVisibleCells().map((cell) => {
                    const numeric = (cell.column.columnDef.meta as { numeric?: boolean } | undefined)
                      ?.numeric;
                    return (
                      <div
                        role="cell"
                        key={cell.id}
                        className={`truncate px-2 py-1 ${numeric || cell.column.id === "__row" ? "text-right" : ""} ${cell.column.id === "__row" ? "text-ink-soft" : ""}`}
                      >
                        {flexRender(cell.column.columnDef.cell, cell.getContext())}
                      </div>
                    );
                  })}
                </div>
              );
            })}
          </div>
        </div>
      </div>
    </div>
  );
}
