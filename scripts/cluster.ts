// npm run cluster:start / cluster:stop / cluster:status: the three-node Galera test cluster on
// loopback (scripts/lib/galera.ts). `cluster:start -- --fresh` throws the old data away first.
import { GALERA_NODES, dbHostsValue, nodeFor, nodeStatus, startCluster, stopCluster } from "./lib/galera";

const command = process.argv[2];
if (command === "start") {
  await startCluster({ fresh: process.argv.includes("--fresh") });
  console.log(`» Galera cluster is up. For the app: DB_HOSTS=${dbHostsValue()}`);
} else if (command === "stop") {
  await stopCluster();
  console.log("» Galera cluster stopped");
} else if (command === "status") {
  for (const n of GALERA_NODES) {
    const node = nodeFor(n);
    const s = await nodeStatus(node);
    console.log(`node ${n} (127.0.0.1:${node.port}): ${s ? `${s.state}, cluster size ${s.clusterSize}, ${s.primary ? "primary" : "NON-PRIMARY"}, ready ${s.ready ? "yes" : "no"}` : "not running"}`);
  }
} else {
  console.error("Usage: tsx scripts/cluster.ts start [--fresh] | stop | status");
  process.exit(2);
}
process.exit(0);
