// A small HTTP client for the integration tests: keeps cookies like a browser and signs in through
// next-auth's real credentials endpoint (CSRF token + callback), so every test goes through the same
// route handlers a person's browser uses.
import { randomUUID } from "node:crypto";
import { baseUrl } from "../setup/test-env";

export interface Reply<T = any> {
  status: number;
  body: T;
  headers: Headers;
}

export class Client {
  private cookies = new Map<string, string>();
  /**
   * Each client speaks from its own made-up address (X-Forwarded-For, which the server's rate limits
   * key on), like one person on one machine: the suite's many accounts do not share one limit.
   */
  /** The app this client talks to; a test may point it at a second app process. */
  base = baseUrl;
  readonly address = `10.${Math.floor(Math.random() * 256)}.${Math.floor(Math.random() * 256)}.${1 + Math.floor(Math.random() * 254)}`;
  email = "";
  password = "";
  name = "";
  id = 0;

  private remember(headers: Headers) {
    for (const line of headers.getSetCookie()) {
      const [pair] = line.split(";");
      const eq = pair.indexOf("=");
      const name = pair.slice(0, eq).trim();
      const value = pair.slice(eq + 1).trim();
      if (/max-age=0|expires=Thu, 01 Jan 1970/i.test(line) || value === "") this.cookies.delete(name);
      else this.cookies.set(name, value);
    }
  }

  cookieHeader(): string {
    return [...this.cookies].map(([k, v]) => `${k}=${v}`).join("; ");
  }

  async raw(method: string, path: string, init: { body?: string | Uint8Array; headers?: Record<string, string> } = {}): Promise<Reply> {
    const response = await fetch(`${this.base}${path}`, {
      method,
      redirect: "manual",
      headers: { "x-forwarded-for": this.address, ...(this.cookies.size ? { cookie: this.cookieHeader() } : {}), ...init.headers },
      body: init.body as BodyInit | undefined,
    });
    this.remember(response.headers);
    const text = await response.text();
    let body: unknown = text;
    try {
      body = text ? JSON.parse(text) : null;
    } catch {
      /* not JSON (e.g. a page) */
    }
    return { status: response.status, body, headers: response.headers };
  }

  request(method: string, path: string, json?: unknown): Promise<Reply> {
    return this.raw(method, path, json === undefined ? {} : { body: JSON.stringify(json), headers: { "content-type": "application/json" } });
  }

  get = (path: string) => this.request("GET", path);
  post = (path: string, json?: unknown) => this.request("POST", path, json);
  patch = (path: string, json?: unknown) => this.request("PATCH", path, json);
  delete = (path: string) => this.request("DELETE", path);

  async signIn(email: string, password: string): Promise<boolean> {
    const csrf = await this.get("/api/auth/csrf");
    const form = new URLSearchParams({ csrfToken: csrf.body.csrfToken, email, password, json: "true" });
    await this.raw("POST", "/api/auth/callback/credentials", {
      body: form.toString(),
      headers: { "content-type": "application/x-www-form-urlencoded" },
    });
    const session = await this.get("/api/auth/session");
    if (!session.body?.user) return false;
    this.email = email;
    this.password = password;
    this.id = session.body.user.id;
    this.name = session.body.user.name;
    return true;
  }
}

export const anonymous = () => new Client();

export function uniqueEmail(prefix = "user"): string {
  return `${prefix}-${randomUUID().slice(0, 8)}@example.test`;
}

/** Signs up a fresh account through the API and returns a signed-in client. */
export async function newUser(prefix = "user"): Promise<Client> {
  const client = new Client();
  const email = uniqueEmail(prefix);
  const password = `pw-${randomUUID()}`;
  const reply = await client.post("/api/account/signup", { name: `Test ${prefix}`, email, password });
  if (reply.status !== 201) throw new Error(`sign-up failed: ${reply.status} ${JSON.stringify(reply.body)}`);
  if (!(await client.signIn(email, password))) throw new Error("sign-in after sign-up failed");
  return client;
}

export interface LabWithMembers {
  labId: number;
  owner: Client;
  editor: Client;
  viewer: Client;
  outsider: Client;
}

/** Invites an address through the API and returns the invitation's id and the token from the mailed link. */
export async function invite(owner: Client, labId: number, email: string, role: "owner" | "editor" | "viewer") {
  const { linksInMail, newLinkInMail } = await import("./outbox");
  const seen = linksInMail(email, "/invite/");
  const invited = await owner.post(`/api/labs/${labId}/invitations`, { email, role });
  if (invited.status !== 201) throw new Error(`invite failed: ${invited.status} ${JSON.stringify(invited.body)}`);
  const link = await newLinkInMail(email, "/invite/", seen);
  return { id: invited.body.invitation.id as number, token: link.split("/invite/")[1], link };
}

/** Signs up a fresh user and brings them into the lab through a real invitation and acceptance. */
export async function addMember(owner: Client, labId: number, role: "owner" | "editor" | "viewer", prefix: string = role): Promise<Client> {
  const member = await newUser(prefix);
  const { token } = await invite(owner, labId, member.email, role);
  const accepted = await member.post(`/api/invitations/${token}/accept`, {});
  if (accepted.status !== 200) throw new Error(`accept failed: ${JSON.stringify(accepted.body)}`);
  return member;
}

/** A fresh lab with one member per role (joined through real invitations) and a user of another lab. */
export async function labWithMembers(): Promise<LabWithMembers> {
  const owner = await newUser("owner");
  const lab = await owner.post("/api/labs", { name: `Lab ${randomUUID().slice(0, 6)}` });
  const labId = lab.body.lab.id as number;
  const editor = await addMember(owner, labId, "editor");
  const viewer = await addMember(owner, labId, "viewer");
  const outsider = await newUser("outsider");
  await outsider.post("/api/labs", { name: "Somebody else's lab" });
  return { labId, owner, editor, viewer, outsider };
}

/** Asks for a password reset through the API and returns the token from the mailed link. */
export async function resetToken(email: string): Promise<string> {
  const { linksInMail, newLinkInMail } = await import("./outbox");
  const seen = linksInMail(email, "/reset-password");
  const asked = await anonymous().post("/api/account/password/forgot", { email });
  if (asked.status !== 202) throw new Error(`forgot failed: ${asked.status} ${JSON.stringify(asked.body)}`);
  const link = await newLinkInMail(email, "/reset-password", seen);
  return new URL(link).searchParams.get("token")!;
}
