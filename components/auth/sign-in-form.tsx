"use client";

import { zodResolver } from "@hookform/resolvers/zod";
import Link from "next/link";
import { useRouter } from "next/navigation";
import { useState } from "react";
import { useForm } from "react-hook-form";
import type { z } from "zod";
import { Button } from "@/components/ui/button";
import { FormError, TextField } from "@/components/ui/field";
import { useHydrated } from "@/lib/client/use-hydrated";
import { safeReturnPath, signInWithPassword } from "@/lib/client/sign-in";
import { signInBody } from "@/lib/schemas/account";

type Input = z.input<typeof signInBody>;
type Output = z.output<typeof signInBody>;

export function SignInForm({ returnTo, email }: { returnTo?: string; email?: string }) {
  const router = useRouter();
  const hydrated = useHydrated();
  const [formError, setFormError] = useState<string | null>(null);
  const form = useForm<Input, unknown, Output>({ resolver: zodResolver(signInBody), defaultValues: { email: email ?? "", password: "" } });
  const { errors, isSubmitting } = form.formState;

  const onSubmit = form.handleSubmit(async ({ email, password }) => {
    setFormError(null);
    const result = await signInWithPassword(email, password);
    if (result === "ok") {
      router.replace(safeReturnPath(returnTo));
      router.refresh();
    } else {
      setFormError(
        result === "invalid"
          ? "Wrong e-mail address or password."
          : result === "limited"
            ? "Too many sign-in attempts; signing in is paused for a few minutes. If this was not you, reset your password."
            : "Signing in failed; try again in a moment.",
      );
    }
  });

  return (
    <form onSubmit={onSubmit} noValidate className="space-y-4" data-ready={hydrated || undefined}>
      <FormError message={formError} />
      <TextField label="E-mail" type="email" autoComplete="email" error={errors.email?.message} {...form.register("email")} />
      <TextField label="Password" type="password" autoComplete="current-password" error={errors.password?.message} {...form.register("password")} />
      <Button type="submit" busy={isSubmitting} className="w-full">
        Sign in
      </Button>
      <p className="text-center text-sm">
        <Link href="/forgot-password" className="text-flux-700 underline">
          Forgotten password?
        </Link>
      </p>
    </form>
  );
}
