"use client";

import { zodResolver } from "@hookform/resolvers/zod";
import Link from "next/link";
import { useState } from "react";
import { useForm } from "react-hook-form";
import type { z } from "zod";
import { Button } from "@/components/ui/button";
import { FormError, TextField } from "@/components/ui/field";
import { api, ApiError } from "@/lib/client/api";
import { forgotPasswordBody, resetPasswordBody } from "@/lib/schemas/account";

export function ForgotPasswordForm() {
  const [sent, setSent] = useState<string | null>(null);
  const [formError, setFormError] = useState<string | null>(null);
  const form = useForm<z.input<typeof forgotPasswordBody>, unknown, z.output<typeof forgotPasswordBody>>({
    resolver: zodResolver(forgotPasswordBody),
    defaultValues: { email: "" },
  });
  const onSubmit = form.handleSubmit(async (body) => {
    setFormError(null);
    try {
      const result = await api<{ message: string }>("/api/account/password/forgot", { body });
      setSent(result.message);
    } catch (error) {
      setFormError(error instanceof ApiError ? error.message : "Could not send the link.");
    }
  });
  if (sent) return <p role="status" className="text-sm text-paper-900">{sent} The link works for one hour.</p>;
  return (
    <form onSubmit={onSubmit} noValidate className="space-y-4">
      <FormError message={formError} />
      <TextField label="E-mail" type="email" autoComplete="email" error={form.formState.errors.email?.message} {...form.register("email")} />
      <Button type="submit" busy={form.formState.isSubmitting} className="w-full">
        Send reset link
      </Button>
    </form>
  );
}

const resetForm = resetPasswordBody.pick({ password: true });

export function ResetPasswordForm({ token }: { token: string }) {
  const [done, setDone] = useState(false);
  const [formError, setFormError] = useState<string | null>(null);
  const form = useForm<z.input<typeof resetForm>>({ resolver: zodResolver(resetForm), defaultValues: { password: "" } });
  const onSubmit = form.handleSubmit(async ({ password }) => {
    setFormError(null);
    try {
      await api("/api/account/password/reset", { body: { token, password } });
      setDone(true);
    } catch (error) {
      setFormError(error instanceof ApiError ? error.message : "Could not change the password.");
    }
  });
  if (done) {
    return (
      <p role="status" className="text-sm">
        Your password is changed.{" "}
        <Link href="/signin" className="text-flux-700 underline">
          Sign in
        </Link>
      </p>
    );
  }
  return (
    <form onSubmit={onSubmit} noValidate className="space-y-4">
      <FormError message={formError} />
      <TextField
        label="New password"
        type="password"
        autoComplete="new-password"
        hint="At least 10 characters."
        error={form.formState.errors.password?.message}
        {...form.register("password")}
      />
      <Button type="submit" busy={form.formState.isSubmitting} className="w-full">
        Set new password
      </Button>
    </form>
  );
}
