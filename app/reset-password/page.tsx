import Link from "next/link";
import { AuthCard } from "@/components/auth/auth-card";
import { ResetPasswordForm } from "@/components/auth/password-forms";

export const metadata = { title: "Choose a new password" };

export default async function ResetPasswordPage({ searchParams }: { searchParams: Promise<{ token?: string }> }) {
  const { token } = await searchParams;
  return (
    <AuthCard title="Choose a new password">
      {token ? (
        <ResetPasswordForm token={token} />
      ) : (
        <p className="text-sm">
          This page needs the link from the reset e-mail.{" "}
          <Link href="/forgot-password" className="text-flux-700 underline">
            Ask for a new link
          </Link>
        </p>
      )}
    </AuthCard>
  );
}
