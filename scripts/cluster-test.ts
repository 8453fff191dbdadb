// npm run cluster:test: the bounded Galera fault test (scripts/lib/galera-test.ts). Starts the
// three-node loopback cluster and a production app server, writes while a node is killed and
// another is shut down, checks every acknowledged write on every node, stops everything, and exits
// non-zero if an acknowledged write is missing or a client saw anything but a retryable 503.
// `-- --fresh` rebuilds the cluster's data directories from nothing first (~20 s more); `-- --no-build`
// uses the existing production build even if sources changed (tests/api/galera.test.ts, after the
// server tests' global set-up has built it).
import { writeFileSync } from "node:fs";
import { join } from "node:path";
import { clusterDir } from "./lib/galera";
import { runGaleraTest } from "./lib/galera-test";

console.log("Fluxframe Galera test: three nodes on loopback, one app server, writes during node failures");
const summary = await runGaleraTest({ fresh: process.argv.includes("--fresh"), build: !process.argv.includes("--no-build") });
// The report goes beside the cluster's data (.data/galera/test-report.json for slot 0).
writeFileSync(join(clusterDir(), "test-report.json"), JSON.stringify({ at: new Date().toISOString(), ...summary }, null, 2) + "\n");
console.log("\nSummary");
console.log(`  write attempts:              ${summary.attempts}`);
console.log(`  acknowledged (201):          ${summary.acknowledged}`);
console.log(`  acknowledged but missing:    ${summary.lost.reduce((s, l) => s + l.missing, 0)}${summary.lost.length ? ` (${summary.lost.map((l) => `node ${l.node} at "${l.check}": ${l.missing}`).join("; ")})` : ""}`);
console.log(`  stored although not acknowledged (reply lost; informational): ${summary.unacknowledgedButStored}`);
console.log(`  client errors by status:     ${Object.keys(summary.clientErrors).length ? Object.entries(summary.clientErrors).map(([k, v]) => `${k} × ${v}`).join(", ") : "none"}`);
for (const [phase, errors] of Object.entries(summary.clientErrorsByPhase)) console.log(`    while ${phase}: ${Object.entries(errors).map(([k, v]) => `${k} × ${v}`).join(", ")}`);
console.log(`  errors other than 503 + Retry-After: ${summary.badErrors}`);
console.log(`  tables unfit for Galera:     ${summary.unfitTables.length ? summary.unfitTables.join(", ") : "none (all InnoDB with a primary key)"}`);
console.log(`  time:                        ${summary.seconds} s`);
console.log(summary.passed ? "PASS: no acknowledged write lost; clients saw only retryable errors" : "FAIL");
process.exit(summary.passed ? 0 : 1);
