"use client";

import { zodResolver } from "@hookform/resolvers/zod";
import { useRouter } from "next/navigation";
import { useState } from "react";
import { useForm } from "react-hook-form";
import type { z } from "zod";
import { Button } from "@/components/ui/button";
import { FormError, TextField } from "@/components/ui/field";
import { api, ApiError } from "@/lib/client/api";
import { useHydrated } from "@/lib/client/use-hydrated";
import { safeReturnPath, signInWithPassword } from "@/lib/client/sign-in";
import { signUpBody } from "@/lib/schemas/account";

type Input = z.input<typeof signUpBody>;
type Output = z.output<typeof signUpBody>;

export function SignUpForm({ returnTo, email }: { returnTo?: string; email?: string }) {
  const router = useRouter();
  const hydrated = useHydrated();
  const [formError, setFormError] = useState<string | null>(null);
  const form = useForm<Input, unknown, Output>({
    resolver: zodResolver(signUpBody),
    defaultValues: { name: "", email: email ?? "", password: "" },
  });
  const { errors, isSubmitting } = form.formState;

  const onSubmit = form.handleSubmit(async (body) => {
    setFormError(null);
    try {
      await api("/api/account/signup", { body });
    } catch (error) {
      if (error instanceof ApiError) {
        for (const [field, message] of Object.entries(error.fields)) {
          if (field === "name" || field === "email" || field === "password") form.setError(field, { message });
        }
        setFormError(error.message);
      } else {
        setFormError("Could not create the account.");
      }
      return;
    }
    const result = await signInWithPassword(body.email, body.password);
    if (result !== "ok") {
      router.replace("/signin");
      return;
    }
    router.replace(safeReturnPath(returnTo));
    router.refresh();
  });

  return (
    <form onSubmit={onSubmit} noValidate className="space-y-4" data-ready={hydrated || undefined}>
      <FormError message={formError} />
      <TextField label="Your name" autoComplete="name" error={errors.name?.message} {...form.register("name")} />
      <TextField
        label="E-mail"
        type="email"
        autoComplete="email"
        readOnly={Boolean(email)}
        hint={email ? "This is the address the invitation was sent to." : undefined}
        error={errors.email?.message}
        {...form.register("email")}
      />
      <TextField
        label="Password"
        type="password"
        autoComplete="new-password"
        hint="At least 10 characters."
        error={errors.password?.message}
        {...form.register("password")}
      />
      <Button type="submit" busy={isSubmitting} className="w-full">
        Create account
      </Button>
    </form>
  );
}
