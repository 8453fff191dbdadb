import { resolve } from "node:path";
import { defineConfig } from "vitest/config";
import { testEnv } from "./tests/setup/test-env.ts";

const root = import.meta.dirname;

export default defineConfig({
  resolve: {
    alias: {
      "@": root,
      // Server-only modules are imported directly by tests; the marker package would throw outside React.
      "server-only": resolve(root, "node_modules/server-only/empty.js"),
    },
  },
  test: {
    env: testEnv,
    maxWorkers: 2,
    projects: [
      {
        extends: true,
        test: { name: "unit", include: ["tests/**/*.test.ts"], exclude: ["tests/api/**", "tests/e2e/**", "node_modules/**"] },
      },
      {
        extends: true,
        test: {
          name: "server",
          include: ["tests/api/**/*.test.ts", "tests/e2e/**/*.test.ts"],
          globalSetup: ["tests/setup/global-setup.ts"],
          testTimeout: 60_000,
          hookTimeout: 120_000,
          // A browser on a loaded 2-core machine can take more than the default second to settle;
          // polling longer changes no result, it only waits for it.
          expect: { poll: { timeout: 10_000 } },
        },
      },
    ],
  },
});
