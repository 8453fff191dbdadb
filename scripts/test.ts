// npm test: Chromium for the browser tests, then every test (vitest runs the unit, HTTP and browser
// projects; the HTTP/browser project's global set-up prepares the test database and server), ending
// with the line "N passed, N failed" counted from vitest's JSON report.
import { spawnSync } from "node:child_process";
import { existsSync, mkdirSync, readFileSync, rmSync } from "node:fs";
import { join } from "node:path";
import { root } from "./lib/env";
import { ensureDebianPackages, findExecutable } from "./lib/system";

interface Report {
  numPassedTests: number;
  numFailedTests: number;
  numPendingTests: number;
  numTodoTests: number;
  testResults: { name: string; status: string; message?: string; assertionResults: unknown[] }[];
}

function pythonHas(module: string): boolean {
  return spawnSync("/usr/bin/python3", ["-c", `import ${module}`]).status === 0;
}

function main(): number {
  // Independent tools the tests compare against: Chromium for the browser tests; libtiff's tiffcp and
  // Debian's numpy + tifffile (run with /usr/bin/python3, not a pyenv one) and ImageMagick for the TIFF checks.
  const needed: [string, () => boolean][] = [
    ["chromium", () => Boolean(findExecutable("chromium"))],
    ["libtiff-tools", () => Boolean(findExecutable("tiffcp"))],
    ["python3-numpy", () => pythonHas("numpy")],
    ["python3-tifffile", () => pythonHas("tifffile")],
    // The real ImageMagick; /usr/local/bin/convert may be a stand-in, so look for Debian's own.
    ["imagemagick", () => existsSync("/usr/bin/convert")],
  ];
  const missing = needed.filter(([, present]) => !present()).map(([pkg]) => pkg);
  if (missing.length) ensureDebianPackages(missing, "the browser and file-format tests");

  const reportFile = join(root, ".data", "test-report.json");
  mkdirSync(join(root, ".data"), { recursive: true });
  rmSync(reportFile, { force: true });
  const run = spawnSync(
    join(root, "node_modules", ".bin", "vitest"),
    ["run", "--reporter=default", "--reporter=json", `--outputFile.json=${reportFile}`, ...process.argv.slice(2)],
    { cwd: root, stdio: "inherit", env: { ...process.env, CI: process.env.CI ?? "" } },
  );

  if (!existsSync(reportFile)) {
    console.log("\nThe test run ended before vitest wrote its report (see the errors above).");
    console.log("0 passed, 1 failed");
    return 1;
  }
  const report = JSON.parse(readFileSync(reportFile, "utf8")) as Report;
  // A file that failed to load has no test results of its own; count it as one failure.
  const brokenFiles = report.testResults.filter((f) => f.status === "failed" && f.assertionResults.length === 0).length;
  let failed = report.numFailedTests + brokenFiles;
  if (run.status !== 0 && failed === 0) {
    // e.g. the global set-up (database, build, server) failed and no test could run
    console.log("\nvitest exited with an error before any test failed: counted as one failure.");
    failed = 1;
  }
  const skipped = report.numPendingTests + report.numTodoTests;
  console.log(`\n${report.numPassedTests} passed, ${failed} failed${skipped ? `, ${skipped} skipped` : ""}`);
  return failed > 0 || run.status !== 0 ? 1 : 0;
}

process.exit(main());
