import type { Config } from "tailwindcss";

// Design tokens (LOOK.md). Neutrals carry no tint so that channel colours on the bench are judged
// against a neutral surround (common practice in colour-critical viewing).
// Text pairs used in the app meet WCAG AA (4.5:1): paper-900 on paper-50, graphite-100 on
// graphite-900, flux-700 on white (checked in tests/lib/design-tokens.test.ts).
const config: Config = {
  content: ["./app/**/*.{ts,tsx}", "./components/**/*.{ts,tsx}"],
  theme: {
    extend: {
      fontFamily: {
        sans: ['"Inter Variable"', "system-ui", "sans-serif"],
        mono: ['"JetBrains Mono Variable"', "ui-monospace", "monospace"],
      },
      colors: {
        graphite: {
          50: "#f2f2f2",
          100: "#e0e0e0",
          200: "#c2c2c2",
          300: "#9e9e9e",
          400: "#7a7a7a",
          500: "#5c5c5c",
          600: "#474747",
          700: "#363636",
          800: "#262626",
          900: "#1a1a1a",
          950: "#111111",
        },
        paper: {
          50: "#fbfbfa",
          100: "#f4f4f2",
          200: "#e6e6e3",
          300: "#d0d0cc",
          500: "#6b6b66",
          700: "#45453f",
          900: "#1c1c19",
        },
        flux: {
          50: "#ecfbf8",
          100: "#cff3ec",
          300: "#6fd2c1",
          500: "#1a9e8a",
          600: "#13806f",
          700: "#0f6659",
          800: "#0c5249",
        },
        ok: { 100: "#dcf3e2", 700: "#1d6b34" },
        caution: { 100: "#fbefd2", 700: "#7a5300" },
        fault: { 100: "#fbe0df", 700: "#a12622" },
      },
      borderRadius: { DEFAULT: "5px", sm: "4px", md: "6px" },
    },
  },
};

export default config;
