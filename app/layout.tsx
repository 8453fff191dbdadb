import "@fontsource-variable/inter";
import "@fontsource-variable/jetbrains-mono";
import "./globals.css";
import type { Metadata } from "next";
import { connection } from "next/server";
import type { ReactNode } from "react";
import { SiteFooter } from "@/components/shell/site-footer";
import { Providers } from "./providers";

export const metadata: Metadata = {
  title: { default: "Fluxframe", template: "%s · Fluxframe" },
  description: "Check, map and share 12/16-bit fluorescence stacks without changing the raw counts.",
};

export default async function RootLayout({ children }: { children: ReactNode }) {
  // Every page renders per request, so Next can put the request's CSP nonce (proxy.ts) on its scripts;
  // a page prerendered at build time would carry no nonce and its scripts would be refused.
  await connection();
  return (
    <html lang="en">
      <body className="flex min-h-screen flex-col overflow-x-hidden bg-paper-50 text-paper-900 antialiased">
        <a href="#main" className="sr-only focus:not-sr-only focus:absolute focus:left-2 focus:top-2 focus:z-50 focus:rounded focus:bg-white focus:px-3 focus:py-2">
          Skip to content
        </a>
        <Providers>
          <div className="flex flex-1 flex-col">{children}</div>
          <SiteFooter />
        </Providers>
      </body>
    </html>
  );
}
