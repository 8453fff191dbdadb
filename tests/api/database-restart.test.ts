// MariaDB restarted while saves are under way (issue 7, "Database faults"). A separate MariaDB
// instance (its own port and data folder: the shared test database on 3308 is never touched) and a
// separate `next start` pointed at it. Several clients create presets in a loop while the database
// is shut down cleanly and started again, and then killed with SIGKILL and started again. Afterwards:
// every acknowledged (201) save is in the database with what was sent; every refusal the clients saw
// was the one error shape with 503 and Retry-After (no 500, no HTML, no dropped connection); the app
// process never exited and serves saves again by itself once the database is back.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Sequelize } from "sequelize";
import { QueryTypes } from "sequelize";
import { expectErrorShape } from "../helpers/errors";
import type { Client } from "../helpers/http";
import { SeparateStack } from "../helpers/separate-stack";

const stack = new SeparateStack({ index: 0, name: "dbrestart" });
let clients: { client: Client; labId: number }[] = [];

beforeAll(async () => {
  await stack.start();
  for (let i = 0; i < 4; i++) {
    const client = await stack.newUser(`saver${i}`);
    const lab = await client.post("/api/labs", { name: `Restart lab ${i}` });
    expect(lab.status).toBe(201);
    clients.push({ client, labId: lab.body.lab.id });
  }
}, 240_000);

afterAll(async () => {
  await stack.stop();
  clients = [];
}, 120_000);

interface Outcome {
  name: string;
  at: number;
  status: number | "no answer";
  id?: number;
  body?: unknown;
  retryAfter?: string | null;
  contentType?: string | null;
}

const preset = (name: string) => ({
  name,
  scope: "private",
  blend: "add",
  channels: [{ match: { index: 0 }, visible: true, colour: "#00ff00", tableId: null, gamma: 1, range: { mode: "counts", black: 100, white: 3000 } }],
});

/** Each client saves presets one after another until `stop()`; every answer is recorded. */
function saveLoop(outcomes: Outcome[], tag: string) {
  let running = true;
  const loops = clients.map(async ({ client, labId }, c) => {
    for (let n = 0; running; n++) {
      const name = `${tag} c${c} n${n}`;
      const at = Date.now();
      try {
        const reply = await fetch(`${stack.url}/api/labs/${labId}/presets`, {
          method: "POST",
          headers: { "content-type": "application/json", cookie: client.cookieHeader(), "x-forwarded-for": client.address },
          body: JSON.stringify(preset(name)),
          signal: AbortSignal.timeout(60_000),
        });
        const text = await reply.text();
        let body: unknown = text;
        try {
          body = JSON.parse(text);
        } catch {
          /* kept as text: an HTML page here is a failure */
        }
        outcomes.push({
          name,
          at,
          status: reply.status,
          id: reply.status === 201 ? (body as { preset: { id: number } }).preset.id : undefined,
          body,
          retryAfter: reply.headers.get("retry-after"),
          contentType: reply.headers.get("content-type"),
        });
      } catch {
        outcomes.push({ name, at, status: "no answer" });
      }
      await new Promise((r) => setTimeout(r, 20));
    }
  });
  return {
    stop: async () => {
      running = false;
      await Promise.all(loops);
    },
  };
}

async function waitUntil(probe: () => boolean, timeoutMs: number): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!probe()) {
    if (Date.now() > deadline) throw new Error("condition not met in time");
    await new Promise((r) => setTimeout(r, 100));
  }
}

async function presetsNamed(sequelize: Sequelize, prefix: string) {
  return sequelize.query<{ id: number; name: string }>("SELECT id, name FROM presets WHERE name LIKE ?", {
    replacements: [`${prefix} %`],
    type: QueryTypes.SELECT,
  });
}

/** Runs the save loops across one database outage and checks everything the clients were told. */
async function savesAcross(tag: string, outage: () => Promise<void>) {
  const outcomes: Outcome[] = [];
  const loop = saveLoop(outcomes, tag);
  // Saves flow before the fault…
  await waitUntil(() => outcomes.filter((o) => o.status === 201).length >= 8, 30_000);
  const faultAt = Date.now();
  await outage();
  const backAt = Date.now();
  // …and come back by themselves afterwards (no app restart): every client gets saves through again.
  await waitUntil(() => clients.every((_, c) => outcomes.some((o) => o.at > backAt && o.status === 201 && o.name.startsWith(`${tag} c${c} `))), 90_000);
  await loop.stop();

  expect(stack.app!.child.exitCode, "the app process is still running").toBeNull();
  const refused = outcomes.filter((o) => o.status !== 201);
  // Every refusal is the retryable one: 503 in the one error shape with Retry-After, JSON, never a
  // 500, an HTML page or a dropped connection.
  for (const o of refused) {
    expect({ name: o.name, status: o.status, contentType: o.contentType }).toEqual({ name: o.name, status: 503, contentType: expect.stringContaining("application/json") });
    expectErrorShape(o.body);
    expect((o.body as { error: { code: string } }).error.code).toBe("unavailable");
    expect(Number(o.retryAfter)).toBeGreaterThan(0);
  }
  // The outage was real: saves were refused while the database was away (not just slowed down).
  const during = outcomes.filter((o) => o.at >= faultAt && o.at <= backAt);
  expect(during.length).toBeGreaterThan(0);

  const acknowledged = outcomes.filter((o) => o.status === 201);
  const sequelize = stack.sequelize();
  try {
    const rows = await presetsNamed(sequelize, tag);
    const byId = new Map(rows.map((r) => [r.id, r.name]));
    const lost = acknowledged.filter((o) => byId.get(o.id!) !== o.name).map((o) => o.name);
    expect(lost, "acknowledged saves missing from the database").toEqual([]);
    // Nothing was saved twice under one name by a retry (each name was sent once).
    expect(new Set(rows.map((r) => r.name)).size).toBe(rows.length);
  } finally {
    await sequelize.close();
  }
  return { total: outcomes.length, acknowledged: acknowledged.length, refused: refused.length, during: during.length };
}

describe("MariaDB restarted while saves are under way", () => {
  it("keeps every acknowledged save through a clean restart, answers 503 + Retry-After meanwhile and reconnects by itself", async () => {
    const counts = await savesAcross("clean", () => stack.restartDb(3000));
    expect(counts.acknowledged).toBeGreaterThan(8);
    console.log(`[database-restart] ${JSON.stringify(counts)}`);
  }, 240_000);

  it("keeps every acknowledged save when mariadbd is killed with SIGKILL, and reconnects by itself", async () => {
    const counts = await savesAcross("killed", () => stack.killDb(3000));
    expect(counts.acknowledged).toBeGreaterThan(8);
    console.log(`[database-restart] ${JSON.stringify(counts)}`);
  }, 240_000);
});
