// Default channel colours for files that name none: the colour-blind-safe channel sets of
// colour-tables.ts (magenta/green for two channels, Wong 2011; Okabe & Ito colours for three and
// four), grey for one. Kept as a thin wrapper so the ingest and the bench agree on one set.
import { OKABE_ITO_COLOURS, parseHex, safeChannelColours } from "./colour-tables";

export const OKABE_ITO = OKABE_ITO_COLOURS;

/** Colour for channel `c` of `count` when the file names none. */
export function defaultChannelColour(c: number, count: number): string {
  return safeChannelColours(count)[c];
}

export function hexToRgb(hex: string): [number, number, number] {
  const [r, g, b] = parseHex(hex);
  return [r, g, b];
}
