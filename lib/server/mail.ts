import "server-only";
import nodemailer, { type Transporter } from "nodemailer";

let transporter: Transporter | null = null;

function transport(): Transporter {
  transporter ??= nodemailer.createTransport({
    host: process.env.SMTP_HOST || "127.0.0.1",
    port: Number(process.env.SMTP_PORT || 2525),
    secure: false,
    // The local fake server speaks plain SMTP on loopback (PLATFORM.md); a real server may use STARTTLS.
    ignoreTLS: process.env.SMTP_FAKE === "1",
    auth: process.env.SMTP_USER ? { user: process.env.SMTP_USER, pass: process.env.SMTP_PASSWORD ?? "" } : undefined,
  });
  return transporter;
}

export function appUrl(path: string): string {
  const base = (process.env.NEXTAUTH_URL || "http://localhost:3000").replace(/\/$/, "");
  return `${base}${path}`;
}

export interface Mail {
  to: string;
  subject: string;
  text: string;
}

export async function sendMail(mail: Mail): Promise<void> {
  await transport().sendMail({
    from: process.env.MAIL_FROM || "Fluxframe <no-reply@fluxframe.test>",
    to: mail.to,
    subject: mail.subject,
    text: `${mail.text}\n\n— Fluxframe. Research use only; not for clinical diagnosis.\n`,
  });
}
