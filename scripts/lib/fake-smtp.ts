// A local fake SMTP server for development and tests: accepts every message on loopback and keeps it
// as a JSON file in the outbox folder, where /dev/outbox (lib/server/outbox.ts) reads it.
import { randomUUID } from "node:crypto";
import { mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { simpleParser } from "mailparser";
import { SMTPServer } from "smtp-server";

export interface FakeSmtp {
  port: number;
  close(): Promise<void>;
}

export async function startFakeSmtp(port: number, outboxDir: string): Promise<FakeSmtp> {
  mkdirSync(outboxDir, { recursive: true });
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ["STARTTLS"],
    logger: false,
    onData(stream, _session, callback) {
      simpleParser(stream)
        .then((mail) => {
          const id = `${Date.now()}-${randomUUID()}`;
          const to = Array.isArray(mail.to) ? mail.to : mail.to ? [mail.to] : [];
          const record = {
            id,
            date: (mail.date ?? new Date()).toISOString(),
            from: mail.from?.text ?? "",
            to: to.flatMap((a) => a.value.map((v) => v.address ?? "")),
            subject: mail.subject ?? "",
            text: mail.text ?? "",
            html: typeof mail.html === "string" ? mail.html : "",
          };
          writeFileSync(join(outboxDir, `${id}.json`), JSON.stringify(record, null, 2));
          callback();
        })
        .catch((error: Error) => callback(error));
    },
  });
  await new Promise<void>((resolve, reject) => {
    server.once("error", reject);
    server.listen(port, "127.0.0.1", () => resolve());
  });
  return {
    port,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}
