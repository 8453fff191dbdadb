import Link from "next/link";
import { AuthCard } from "@/components/auth/auth-card";
import { ForgotPasswordForm } from "@/components/auth/password-forms";

export const metadata = { title: "Forgotten password" };

export default function ForgotPasswordPage() {
  return (
    <AuthCard
      title="Forgotten password"
      footer={
        <Link href="/signin" className="text-flux-700 underline">
          Back to sign in
        </Link>
      }
    >
      <p className="mb-4 text-sm text-paper-700">Enter your account&apos;s e-mail address and we will send a link to choose a new password.</p>
      <ForgotPasswordForm />
    </AuthCard>
  );
}
