// Default channel colours. Okabe & Ito, "Color Universal Design" (2002, revised 2008): colours that
// stay distinguishable for people with red–green colour-vision deficiency. Two channels get
// magenta/green (Wong, "Points of view: Color blindness", Nature Methods 8:441, 2011).

export const OKABE_ITO = {
  orange: "#E69F00",
  skyBlue: "#56B4E9",
  bluishGreen: "#009E73",
  yellow: "#F0E442",
  blue: "#0072B2",
  vermillion: "#D55E00",
  reddishPurple: "#CC79A7",
} as const;

const TWO_CHANNELS = ["#FF00FF", "#00FF00"];
const MANY_CHANNELS = [OKABE_ITO.skyBlue, OKABE_ITO.orange, OKABE_ITO.bluishGreen, OKABE_ITO.reddishPurple, OKABE_ITO.yellow, OKABE_ITO.vermillion, OKABE_ITO.blue];

/** Colour for channel `c` of `count` when the file names none: grey for one, magenta/green for two. */
export function defaultChannelColour(c: number, count: number): string {
  if (count <= 1) return "#FFFFFF";
  if (count === 2) return TWO_CHANNELS[c];
  return MANY_CHANNELS[c % MANY_CHANNELS.length];
}

export function hexToRgb(hex: string): [number, number, number] {
  const value = parseInt(hex.replace("#", "").slice(0, 6), 16);
  return [(value >> 16) & 255, (value >> 8) & 255, value & 255];
}
