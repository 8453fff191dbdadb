import Link from "next/link";
import { redirect } from "next/navigation";
import { AuthCard } from "@/components/auth/auth-card";
import { SignInForm } from "@/components/auth/sign-in-form";
import { currentUser } from "@/lib/server/access";

export const metadata = { title: "Sign in" };

export default async function SignInPage({ searchParams }: { searchParams: Promise<{ callbackUrl?: string; email?: string }> }) {
  const { callbackUrl, email } = await searchParams;
  if (await currentUser()) redirect(callbackUrl?.startsWith("/") && !callbackUrl.startsWith("//") ? callbackUrl : "/labs");
  const signUpHref = `/signup${callbackUrl ? `?callbackUrl=${encodeURIComponent(callbackUrl)}` : ""}`;
  return (
    <AuthCard
      title="Sign in"
      footer={
        <>
          New to Fluxframe?{" "}
          <Link href={signUpHref} className="text-flux-700 underline">
            Create an account
          </Link>
        </>
      }
    >
      <SignInForm returnTo={callbackUrl} email={email} />
    </AuthCard>
  );
}
