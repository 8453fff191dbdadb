/** One line of `npm run bench`: a figure, the baseline it is measured against in the same run, and the target. */
export interface Row {
  bench: string;
  baseline: string;
  measured: string;
  /** measured / baseline (lower is better for time; 1.000 for equal bytes). */
  ratio: number;
  target: string;
  met: boolean;
}

/** Milliseconds for the table: two decimals under 10 ms, one above. */
export const ms = (value: number) => (value < 10 ? value.toFixed(2) : value.toFixed(1)) + " ms";
