// Text colour pairs used by the app's pages must meet WCAG AA for normal text (4.5:1).
// Source: W3C, WCAG 2.2 (2023), "relative luminance", "contrast ratio" and SC 1.4.3;
// reference values in shared/reference/wcag_contrast.json. Contrast computed with culori's wcagContrast.
import { wcagContrast } from "culori";
import { readFileSync } from "node:fs";
import { resolve } from "node:path";
import { describe, expect, it } from "vitest";
import config from "@/tailwind.config";

const reference = JSON.parse(readFileSync(resolve(import.meta.dirname, "../../../shared/reference/wcag_contrast.json"), "utf8"));
const colors = config.theme!.extend!.colors as Record<string, Record<string, string>>;
const c = (token: string) => {
  const [family, shade] = token.split("-");
  return family === "white" ? "#ffffff" : colors[family][shade];
};

describe("culori's contrast ratio", () => {
  it("matches the WCAG worked examples (W3C WCAG 2.2; shared/reference/wcag_contrast.json)", () => {
    for (const row of reference.worked_examples_derived.rows as { fg: string; bg: string; contrast: number }[]) {
      expect(wcagContrast(row.fg, row.bg)).toBeCloseTo(row.contrast, 3);
    }
  });
});

// [foreground, background, where it is used]
const textPairs: [string, string, string][] = [
  ["paper-900", "paper-50", "body text on pages"],
  ["paper-700", "paper-50", "secondary text on pages"],
  ["paper-700", "paper-100", "footer and table headers"],
  ["paper-700", "white", "hints in cards"],
  ["paper-500", "white", "input placeholders"],
  ["flux-700", "white", "links"],
  ["flux-700", "paper-50", "links on pages"],
  ["white", "flux-700", "primary buttons"],
  ["white", "flux-800", "primary buttons, hover"],
  ["fault-700", "fault-100", "error messages"],
  ["fault-700", "white", "field errors and danger buttons"],
  ["ok-700", "white", "success messages"],
  ["caution-700", "caution-100", "caution verdicts"],
  ["ok-700", "ok-100", "ready verdicts"],
  ["graphite-100", "graphite-900", "bench text"],
  ["graphite-200", "graphite-800", "bench secondary text"],
];

describe("design tokens", () => {
  it.each(textPairs)("%s on %s (%s) reaches 4.5:1", (fg, bg) => {
    expect(wcagContrast(c(fg), c(bg))).toBeGreaterThanOrEqual(reference.thresholds["SC 1.4.3 AA normal text"]);
  });

  it("uses neutral greys without a tint for the bench surround (common practice in colour-critical viewing)", () => {
    for (const hex of Object.values(colors.graphite)) {
      const [r, g, b] = [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16));
      expect(r === g && g === b, hex).toBe(true);
    }
  });
});
