import { z } from "zod";

// Shared by the route handlers and the forms, so a field error reads the same in both places.
export const email = z
  .string()
  .trim()
  .min(1, "Enter an e-mail address.")
  .max(254, "An e-mail address has at most 254 characters.")
  .pipe(z.email("Enter a valid e-mail address."))
  .transform((value) => value.toLowerCase());

export const password = z
  .string()
  .min(10, "Use at least 10 characters.")
  .max(200, "Use at most 200 characters.");

export const personName = z.string().trim().min(1, "Enter your name.").max(120, "At most 120 characters.");

export const signUpBody = z.object({ name: personName, email, password });
export type SignUpBody = z.infer<typeof signUpBody>;

export const signInBody = z.object({ email, password: z.string().min(1, "Enter your password.").max(200) });
export type SignInBody = z.infer<typeof signInBody>;

export const forgotPasswordBody = z.object({ email });

export const resetPasswordBody = z.object({
  token: z.string().min(20, "This reset link is not complete.").max(200),
  password,
});

export const UserOut = z.object({
  id: z.number(),
  email: z.string(),
  name: z.string(),
  isSiteAdmin: z.boolean(),
});
export type UserOut = z.infer<typeof UserOut>;
