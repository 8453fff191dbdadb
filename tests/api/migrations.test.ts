// Every migration runs up, all the way down and up again on a scratch database, so a down() that
// forgets a table or an up() that cannot run twice is caught before it reaches a real installation.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Sequelize } from "sequelize";
import { createSequelize } from "@/lib/server/db";
import { migrator } from "@/lib/server/migrate";

// The app's login may create databases whose name starts with the test database's name.
const scratch = `${process.env.DB_NAME}_migrations`;
const foundationTables = ["audit_events", "invitations", "labs", "memberships", "password_resets", "users"];

let admin: Sequelize;
let sequelize: Sequelize;

const tables = async () =>
  ((await sequelize.getQueryInterface().showAllTables()) as (string | { tableName: string })[])
    .map((t) => (typeof t === "string" ? t : t.tableName))
    .filter((t) => t !== "schema_migrations")
    .sort();

beforeAll(async () => {
  admin = createSequelize();
  await admin.query(`DROP DATABASE IF EXISTS \`${scratch}\``);
  await admin.query(`CREATE DATABASE \`${scratch}\` CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`);
  sequelize = createSequelize(scratch);
});

afterAll(async () => {
  await sequelize?.close();
  await admin?.query(`DROP DATABASE IF EXISTS \`${scratch}\``);
  await admin?.close();
});

describe("migrations", () => {
  it("run up, down to zero and up again, leaving the same schema", async () => {
    const umzug = migrator(sequelize);
    const all = (await umzug.pending()).map((m) => m.name);
    expect(all.length).toBeGreaterThan(0);
    const schema = async () => {
      const out: Record<string, string> = {};
      for (const table of await tables()) {
        const [[row]] = (await sequelize.query(`SHOW CREATE TABLE \`${table}\``)) as [Record<string, string>[], unknown];
        // The auto-increment counter is data, not schema.
        out[table] = row["Create Table"].replace(/ AUTO_INCREMENT=\d+/, "");
      }
      return out;
    };

    await umzug.up();
    const first = await schema();
    expect(Object.keys(first)).toEqual(expect.arrayContaining(foundationTables));
    expect((await umzug.executed()).map((m) => m.name)).toEqual(all);

    await umzug.down({ to: 0 });
    expect(await tables()).toEqual([]);
    expect(await umzug.executed()).toEqual([]);

    await umzug.up();
    expect(await schema()).toEqual(first);
  });

  it("gives a working schema after the round trip: the e-mail is unique whatever its letter case", async () => {
    const now = new Date();
    await sequelize.query("INSERT INTO users (email, name, password_hash, created_at, updated_at) VALUES (?, 'A', 'x', ?, ?)", {
      replacements: ["case@example.test", now, now],
    });
    await expect(
      sequelize.query("INSERT INTO users (email, name, password_hash, created_at, updated_at) VALUES (?, 'B', 'x', ?, ?)", {
        replacements: ["CASE@example.test", now, now],
      }),
    ).rejects.toMatchObject({ name: "SequelizeUniqueConstraintError" });
  });
});
