"use client";

import { flexRender, getCoreRowModel, getSortedRowModel, useReactTable, type ColumnDef, type OnChangeFn, type SortingState } from "@tanstack/react-table";
import { useState } from "react";

interface ServerSorting {
  /** Sorting done by the server (paged tables): the table only reports clicks. */
  sorting: SortingState;
  onSortingChange: OnChangeFn<SortingState>;
}

/**
 * A light-page table: sortable headers (click or Enter), hairline rows, numbers right-aligned by the
 * caller. Sorts in the browser, or with `server` hands sorting to the caller.
 */
export function DataTable<T>({ data, columns, caption, server }: { data: T[]; columns: ColumnDef<T, unknown>[]; caption: string; server?: ServerSorting }) {
  const [localSorting, setLocalSorting] = useState<SortingState>([]);
  // eslint-disable-next-line react-hooks/incompatible-library -- TanStack Table returns fresh functions by design
  const table = useReactTable({
    data,
    columns,
    state: { sorting: server?.sorting ?? localSorting },
    onSortingChange: server?.onSortingChange ?? setLocalSorting,
    manualSorting: Boolean(server),
    enableSortingRemoval: !server,
    getCoreRowModel: getCoreRowModel(),
    getSortedRowModel: getSortedRowModel(),
  });
  return (
    <div className="overflow-x-auto rounded-md border border-paper-200 bg-white">
      <table className="w-full text-left text-sm">
        <caption className="sr-only">{caption}</caption>
        <thead className="border-b border-paper-200 bg-paper-100 text-xs uppercase tracking-wide text-paper-700">
          {table.getHeaderGroups().map((group) => (
            <tr key={group.id}>
              {group.headers.map((header) => {
                const sorted = header.column.getIsSorted();
                return (
                  <th
                    key={header.id}
                    scope="col"
                    aria-sort={sorted === "asc" ? "ascending" : sorted === "desc" ? "descending" : undefined}
                    className="px-3 py-2 font-medium"
                  >
                    {header.column.getCanSort() ? (
                      <button type="button" onClick={header.column.getToggleSortingHandler()} className="inline-flex items-center gap-1 uppercase">
                        {flexRender(header.column.columnDef.header, header.getContext())}
                        <span aria-hidden>{sorted === "asc" ? "▲" : sorted === "desc" ? "▼" : ""}</span>
                      </button>
                    ) : (
                      flexRender(header.column.columnDef.header, header.getContext())
                    )}
                  </th>
                );
              })}
            </tr>
          ))}
        </thead>
        <tbody className="divide-y divide-paper-200">
          {table.getRowModel().rows.map((row) => (
            <tr key={row.id}>
              {row.getVisibleCells().map((cell) => (
                <td key={cell.id} className="px-3 py-2 align-middle">
                  {flexRender(cell.column.columnDef.cell, cell.getContext())}
                </td>
              ))}
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}
