// No secret in any log (issue 7, "No secret or password hash in any response or log"). A separate
// stack whose app server and ingest worker write stdout and stderr to files; a person signs up, signs
// in with the right and a wrong password, asks for a password reset and uses it, creates a lab,
// uploads a stack (ingested by the worker), creates a view link and opens it. Then neither log holds
// the passwords, any bcrypt hash, NEXTAUTH_SECRET, the database password, the view-link token, the
// reset token or a session cookie's value; and the API answers seen on the way hold no hash either.
import { readFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { QueryTypes } from "sequelize";
import { writeTiff } from "@/lib/tiff/writer";
import { Client, uniqueEmail, type Reply } from "../helpers/http";
import { linksInMail, newLinkInMail } from "../helpers/outbox";
import { SeparateStack } from "../helpers/separate-stack";
import { uploadFile, waitForIngest } from "../helpers/uploads";

const stack = new SeparateStack({ index: 3, name: "secrets", worker: true });
// A bcrypt hash in its modular-crypt form: $2a$/$2b$/$2y$, two-digit cost, 53 characters of salt+hash.
const BCRYPT = /\$2[aby]\$\d\d\$[./A-Za-z0-9]{53}/;

const secrets: { what: string; value: string }[] = [];
const answers: { what: string; reply: Reply }[] = [];

beforeAll(async () => {
  await stack.start();
}, 240_000);

afterAll(async () => {
  await stack.stop();
}, 120_000);

const seen = (what: string, reply: Reply) => {
  answers.push({ what, reply });
  return reply;
};

describe("secrets stay out of the logs", () => {
  it("runs a session's worth of sign-up, sign-in, reset, upload and view-link traffic", async () => {
    const fresh = () => {
      const client = new Client();
      client.base = stack.url;
      return client;
    };
    // Each sign-in attempt from a client without a session, so a refused one cannot look signed in.
    const signsIn = (email: string, password: string) => fresh().signIn(email, password);
    const person = fresh();
    const email = uniqueEmail("secret");
    const password = `Pw-${crypto.randomUUID()}`;
    secrets.push({ what: "the password", value: password });
    expect(seen("sign-up", await person.post("/api/account/signup", { name: "Secret keeper", email, password })).status).toBe(201);

    // A wrong password first (the failed attempt is the classic place a password is logged), then the right one.
    const wrong = `${password}-wrong`;
    secrets.push({ what: "the wrong password", value: wrong });
    expect(await signsIn(email, wrong)).toBe(false);
    expect(await person.signIn(email, password)).toBe(true);
    seen("session", await person.get("/api/auth/session"));
    seen("me", await person.get("/api/me"));

    // A password reset: asked for, the mailed token used, and the new password signs in.
    const before = linksInMail(email, "/reset-password");
    const anon = fresh();
    expect(seen("forgot", await anon.post("/api/account/password/forgot", { email })).status).toBe(202);
    const resetToken = new URL(await newLinkInMail(email, "/reset-password", before)).searchParams.get("token")!;
    secrets.push({ what: "the reset token", value: resetToken });
    const newPassword = `Pw2-${crypto.randomUUID()}`;
    secrets.push({ what: "the new password", value: newPassword });
    expect(seen("reset", await anon.post("/api/account/password/reset", { token: resetToken, password: newPassword })).status).toBeLessThan(300);
    expect(await signsIn(email, password)).toBe(false);
    expect(await person.signIn(email, newPassword)).toBe(true);

    const lab = seen("lab", await person.post("/api/labs", { name: "Secrets lab" }));
    const labId = lab.body.lab.id as number;
    seen("members", await person.get(`/api/labs/${labId}/members`));
    const planes = Array.from({ length: 4 }, (_, k) => Uint16Array.from({ length: 32 * 24 }, (_, i) => (i * 3 + k * 17) % 4096));
    const tiff = await writeTiff(planes, { width: 32, height: 24, bitsPerSample: 16 });
    const done = seen("upload", await uploadFile(person, labId, tiff, { fileName: "secret.tif", dimensions: { sizeC: 2, sizeZ: 1, sizeT: 2, order: "XYCZT" } }));
    expect(done.status).toBe(201);
    const datasetId = done.body.datasetId as number;
    expect((await waitForIngest(person, datasetId, 60_000)).dataset.status).toBe("ready");
    seen("dataset", await person.get(`/api/datasets/${datasetId}`));

    const state = { z: 0, t: 1, zoom: 1, pan: { x: 0, y: 0 }, blend: "add", channels: [{ c: 0, visible: true, colour: "#00ff00", tableId: null, gamma: 1, black: 0, white: 4095 }, { c: 1, visible: true, colour: "#ff00ff", tableId: null, gamma: 1, black: 0, white: 4095 }] };
    const link = await person.post(`/api/datasets/${datasetId}/links`, { state, access: "anyone" });
    expect(link.status, JSON.stringify(link.body)).toBe(201);
    secrets.push({ what: "the view-link token", value: link.body.token });
    seen("links", await person.get(`/api/datasets/${datasetId}/links`));
    const guest = fresh();
    expect((await guest.get(`/api/v/${link.body.token}/status`)).status).toBe(200);
    // A wrong token is logged nowhere either (it is someone's guess at a real one).
    expect((await guest.get(`/api/v/${link.body.token.slice(0, -4)}AAAA/status`)).status).toBe(404);

    // The error paths, where whole error objects are logged: the mail server unreachable while a
    // reset is asked for and a link is mailed, and the database down during a sign-in.
    await stack.stopApp();
    await stack.startApp({ SMTP_PORT: "9" });
    // Answered exactly as for an unknown address, so a failed send does not tell who has an account.
    const unsent = seen("forgot without mail", await fresh().post("/api/account/password/forgot", { email }));
    const unknown = await fresh().post("/api/account/password/forgot", { email: uniqueEmail("nobody") });
    expect({ status: unsent.status, body: unsent.body }).toEqual({ status: unknown.status, body: unknown.body });
    expect(unsent.status).toBe(202);
    const mailed = await person.post(`/api/datasets/${datasetId}/links`, { state, access: "anyone", sendTo: ["colleague@example.test"] });
    expect(mailed.status, JSON.stringify(mailed.body)).toBe(201);
    seen("link without mail", mailed);
    secrets.push({ what: "the mailed view-link token", value: mailed.body.token });
    await stack.stopDb();
    expect(await signsIn(email, newPassword)).toBe(false);
    await stack.startDb();
    expect(await signsIn(email, newPassword)).toBe(true);

    for (const [name, value] of person.cookieHeader().split("; ").map((pair) => pair.split("=") as [string, string])) {
      if (/session-token|csrf-token/.test(name)) secrets.push({ what: `cookie ${name}`, value: decodeURIComponent(value).split("|")[0] });
    }
    expect(secrets.some((s) => s.what.includes("session-token"))).toBe(true);
    secrets.push({ what: "NEXTAUTH_SECRET", value: stack.env.NEXTAUTH_SECRET });
    secrets.push({ what: "the database password", value: stack.env.DB_PASSWORD });

    const sequelize = stack.sequelize();
    try {
      const [row] = await sequelize.query<{ password_hash: string }>("SELECT password_hash FROM users WHERE email = ?", { replacements: [email], type: QueryTypes.SELECT });
      expect(row.password_hash).toMatch(BCRYPT);
      secrets.push({ what: "the password hash", value: row.password_hash });
    } finally {
      await sequelize.close();
    }
  }, 240_000);

  it("finds none of them in the app server's or the worker's output", async () => {
    expect(secrets.length).toBeGreaterThanOrEqual(10);
    // Stop both so every line is flushed to the files.
    await stack.stopWorker();
    await stack.stopApp();
    const logs = { app: readFileSync(stack.appLog, "utf8"), worker: readFileSync(stack.workerLog, "utf8") };
    // The capture works: the worker announced itself and reported the ingest job.
    expect(logs.worker).toMatch(/ingest worker \d+ ready/);
    expect(logs.worker).toMatch(/finished job \d+: done/);
    expect(logs.app.length).toBeGreaterThan(0);
    // The error paths above did log (so their output was really searched).
    expect(logs.app).toMatch(/password-reset e-mail not sent/);
    expect(logs.app).toMatch(/link e-mail not sent/);
    for (const [source, text] of Object.entries(logs)) {
      for (const secret of secrets) expect(text.includes(secret.value), `${secret.what} in the ${source} log`).toBe(false);
      expect(text, `a bcrypt hash in the ${source} log`).not.toMatch(BCRYPT);
      // Tokens not known to the test (the reset asked for while mail was down) would sit in a link.
      expect(text, `a reset link in the ${source} log`).not.toMatch(/token=[A-Za-z0-9_-]{20,}/);
      expect(text, `a view link in the ${source} log`).not.toMatch(/\/v\/[A-Za-z0-9_-]{43}/);
    }
  }, 60_000);

  it("finds no password hash in the API answers seen on the way", () => {
    expect(answers.length).toBeGreaterThan(8);
    const hash = secrets.find((s) => s.what === "the password hash")!.value;
    for (const { what, reply } of answers) {
      const text = JSON.stringify(reply.body);
      expect(text, `a hash in the ${what} answer`).not.toMatch(BCRYPT);
      expect(text.includes(hash), `the hash in the ${what} answer`).toBe(false);
      expect(text, `a password in the ${what} answer`).not.toMatch(/Pw2?-[0-9a-f-]{36}/);
    }
  });
});
