import Link from "next/link";
import { redirect } from "next/navigation";
import { AuthCard } from "@/components/auth/auth-card";
import { SignUpForm } from "@/components/auth/sign-up-form";
import { currentUser } from "@/lib/server/access";

export const metadata = { title: "Create an account" };

export default async function SignUpPage({ searchParams }: { searchParams: Promise<{ callbackUrl?: string; email?: string }> }) {
  const { callbackUrl, email } = await searchParams;
  if (await currentUser()) redirect("/labs");
  return (
    <AuthCard
      title="Create your account"
      footer={
        <>
          Already have one?{" "}
          <Link href={`/signin${callbackUrl ? `?callbackUrl=${encodeURIComponent(callbackUrl)}` : ""}`} className="text-flux-700 underline">
            Sign in
          </Link>
        </>
      }
    >
      <SignUpForm returnTo={callbackUrl} email={email} />
    </AuthCard>
  );
}
