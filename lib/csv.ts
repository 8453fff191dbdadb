// CSV as RFC 4180 (Shafranovich 2005, "Common Format and MIME Type for CSV Files") describes it:
// comma-separated, CRLF line ends, a field quoted when it holds a comma, a quote, CR or LF, and a
// quote inside a quoted field doubled. No CSV package is installed, so this small writer does it.

export type CsvValue = string | number | boolean | null | undefined;

/** One field: empty for null/undefined/NaN; numbers as JavaScript prints them (shortest exact form). */
export function csvField(value: CsvValue): string {
  if (value === null || value === undefined) return "";
  if (typeof value === "number" && !Number.isFinite(value)) return Number.isNaN(value) ? "" : String(value);
  const s = String(value);
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/** A header line and one line per row, in the order of `columns`; every line ends with CRLF. */
export function toCsv(columns: readonly string[], rows: readonly Record<string, CsvValue>[]): string {
  const lines = [columns.map(csvField).join(",")];
  for (const row of rows) lines.push(columns.map((c) => csvField(row[c])).join(","));
  return lines.join("\r\n") + "\r\n";
}
