import "server-only";

/**
 * Parses a single-range `Range: bytes=…` header (RFC 9110 §14.1.2): "a-b", "a-" and the suffix form
 * "-n". Returns null when the header is not a byte range we serve (the whole file is sent),
 * "unsatisfiable" for a malformed range or one outside the file (416).
 */
export function parseRange(header: string, size: number): { start: number; end: number } | "unsatisfiable" | null {
  const value = header.trim();
  // Several ranges at once are allowed to be answered with the whole file (RFC 9110 §14.2).
  if (value.startsWith("bytes=") && value.includes(",")) return null;
  const match = /^bytes=(\d*)-(\d*)$/.exec(value);
  if (!match) return "unsatisfiable";
  const [, a, b] = match;
  if (a === "" && b === "") return "unsatisfiable";
  if (a === "") {
    const suffix = Number(b);
    if (suffix === 0) return "unsatisfiable";
    return { start: Math.max(0, size - suffix), end: size - 1 };
  }
  const start = Number(a);
  const end = b === "" ? size - 1 : Math.min(Number(b), size - 1);
  if (start >= size || start > end) return "unsatisfiable";
  return { start, end };
}
