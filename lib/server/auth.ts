import "server-only";
import type { NextAuthOptions } from "next-auth";
import CredentialsProvider from "next-auth/providers/credentials";
import { signInBody } from "@/lib/schemas/account";
import { verifyCredentials } from "./accounts";

// E-mail + password sign-in with JWT sessions that carry the user id. Pages are our own (/signin).
export const authOptions: NextAuthOptions = {
  secret: process.env.NEXTAUTH_SECRET,
  session: { strategy: "jwt", maxAge: 14 * 24 * 3600 },
  pages: { signIn: "/signin", error: "/signin" },
  providers: [
    CredentialsProvider({
      id: "credentials",
      name: "E-mail and password",
      credentials: { email: { label: "E-mail", type: "email" }, password: { label: "Password", type: "password" } },
      async authorize(credentials, req) {
        const parsed = signInBody.safeParse(credentials);
        if (!parsed.success) return null;
        const forwarded = req?.headers?.["x-forwarded-for"];
        const ip = (Array.isArray(forwarded) ? forwarded[0] : forwarded)?.split(",")[0]?.trim() ?? null;
        try {
          const user = await verifyCredentials(parsed.data.email, parsed.data.password, ip);
          return user ? { id: String(user.id), email: user.email, name: user.name } : null;
        } catch (error) {
          // next-auth copies a thrown message into the redirect URL: log the cause, show a plain one.
          console.error("[fluxframe] sign-in failed:", error);
          throw new Error("Signing in is unavailable right now");
        }
      },
    }),
  ],
  callbacks: {
    jwt({ token, user }) {
      if (user) {
        token.uid = Number(user.id);
        token.signedInAt = Date.now();
      }
      return token;
    },
    session({ session, token }) {
      if (session.user && token.uid) {
        session.user.id = token.uid;
        session.user.signedInAt = token.signedInAt;
      }
      return session;
    },
  },
};
