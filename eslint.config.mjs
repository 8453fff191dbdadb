import next from "eslint-config-next/core-web-vitals";
import nextTs from "eslint-config-next/typescript";

const config = [
  ...next,
  ...nextTs,
  { ignores: [".next/**", ".next-test*/**", ".data/**", "node_modules/**", "next-env.d.ts"] },
  {
    // Tests read arbitrary JSON replies; typing every body would add noise, not safety.
    files: ["tests/**"],
    rules: { "@typescript-eslint/no-explicit-any": "off" },
  },
  {
    // Pixel math and worker entries must stay free of the DOM app, React routes and server code,
    // so the worker, the ingest job and the tests can all call them (STYLE.md).
    files: ["lib/imaging/**", "lib/tiff/**", "workers/**"],
    rules: {
      "no-restricted-imports": [
        "error",
        { patterns: ["@/components/*", "@/app/*", "@/lib/server/*", "react", "next/*"] },
      ],
    },
  },
];

export default config;
