import type { DefaultSession } from "next-auth";

declare module "next-auth" {
  interface Session {
    user: { id: number; signedInAt?: number } & DefaultSession["user"];
  }
}

declare module "next-auth/jwt" {
  interface JWT {
    uid?: number;
    /** Milliseconds since the epoch when this session signed in (iat is refreshed; this is not). */
    signedInAt?: number;
  }
}
