import type { NextConfig } from "next";
import { readFileSync } from "node:fs";

const { version } = JSON.parse(readFileSync(new URL("./package.json", import.meta.url), "utf8")) as { version: string };

// Sequelize and the mariadb driver cannot be bundled by Turbopack ("Can't resolve 'pg-hstore'"),
// so they stay ordinary Node.js requires on the server (PLATFORM.md).
const nextConfig: NextConfig = {
  // A second build folder lets parallel test runs (TEST_SLOT) build without clobbering each other.
  distDir: process.env.NEXT_DIST_DIR || ".next",
  serverExternalPackages: ["sequelize", "mariadb", "nodemailer", "mailparser", "bcryptjs"],
  poweredByHeader: false,
  // The app's version, written into figure sidecars (components/bench/figure-dialog.tsx).
  env: { NEXT_PUBLIC_APP_VERSION: version },
  // The build type-checks the app only; `npm run typecheck` covers tests and scripts as well.
  typescript: { tsconfigPath: "tsconfig.app.json" },
  async headers() {
    return [
      {
        source: "/:path*",
        headers: [
          { key: "X-Content-Type-Options", value: "nosniff" },
          { key: "Referrer-Policy", value: "same-origin" },
          { key: "X-Frame-Options", value: "DENY" },
        ],
      },
    ];
  },
};

export default nextConfig;
