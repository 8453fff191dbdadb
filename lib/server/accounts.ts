import "server-only";
import type { SignUpBody, UserOut } from "@/lib/schemas/account";
import { audit } from "./audit";
import { db } from "./db";
import { conflict, gone, HttpError } from "./errors";
import { appUrl, sendMail } from "./mail";
import { checkPassword, hashPassword, spendPasswordCheck } from "./passwords";
import { hashToken, newToken } from "./tokens";
import type { User } from "@/models";

const RESET_HOURS = 1;

export function userOut(user: User): UserOut {
  return { id: user.id, email: user.email, name: user.name, isSiteAdmin: Boolean(user.isSiteAdmin) };
}

export async function signUp(body: SignUpBody, ip: string | null): Promise<UserOut> {
  const { User, sequelize } = db();
  const passwordHash = await hashPassword(body.password);
  return sequelize.transaction(async (transaction) => {
    const existing = await User.findOne({ where: { email: body.email }, transaction });
    if (existing) throw conflict("An account with this e-mail address already exists.", { email: "Already registered; sign in instead." });
    const user = await User.create({ email: body.email, name: body.name, passwordHash }, { transaction });
    await audit({ action: "user.signed_up", actorId: user.id, target: user.email, ip }, transaction);
    return userOut(user);
  });
}

/** Checks an e-mail and password; returns the user or null. Used by next-auth's credentials provider. */
export async function verifyCredentials(email: string, password: string, ip: string | null): Promise<UserOut | null> {
  const { User } = db();
  const user = await User.unscoped().findOne({ where: { email } });
  if (!user) {
    await spendPasswordCheck(password);
    await audit({ action: "user.sign_in_failed", target: email, ip, detail: { reason: "unknown e-mail" } });
    return null;
  }
  if (!(await checkPassword(password, user.passwordHash))) {
    await audit({ action: "user.sign_in_failed", actorId: user.id, target: email, ip, detail: { reason: "wrong password" } });
    return null;
  }
  await audit({ action: "user.signed_in", actorId: user.id, target: email, ip });
  return userOut(user);
}

/** Always succeeds from the caller's point of view, so the answer does not reveal whether an account exists. */
export async function requestPasswordReset(email: string, ip: string | null): Promise<void> {
  const { User, PasswordReset } = db();
  const user = await User.findOne({ where: { email } });
  if (!user) return;
  const { token, hash } = newToken();
  await PasswordReset.create({ userId: user.id, tokenHash: hash, expiresAt: new Date(Date.now() + RESET_HOURS * 3600_000) });
  await audit({ action: "user.password_reset_requested", actorId: user.id, target: email, ip });
  try {
    await sendMail({
      to: user.email,
      subject: "Reset your Fluxframe password",
      text:
        `Hello ${user.name},\n\nSomeone (hopefully you) asked to reset the password of your Fluxframe account.\n` +
        `Open this link within ${RESET_HOURS} hour to choose a new password:\n\n${appUrl(`/reset-password?token=${token}`)}\n\n` +
        `If you did not ask for this, ignore this message; your password stays as it is.`,
    });
  } catch (error) {
    // A failed send must not answer differently from an unknown address (a 500 here would tell who
    // has an account). The error is logged without the message, which holds the token.
    console.error("[fluxframe] password-reset e-mail not sent:", error instanceof Error ? error.message : error);
  }
}

export async function resetPassword(token: string, password: string, ip: string | null): Promise<void> {
  const { User, PasswordReset, sequelize } = db();
  const passwordHash = await hashPassword(password);
  await sequelize.transaction(async (transaction) => {
    const reset = await PasswordReset.findOne({ where: { tokenHash: hashToken(token) }, transaction, lock: transaction.LOCK.UPDATE });
    if (!reset) throw new HttpError(400, "invalid_input", "This reset link is not valid.", { token: "Unknown link; ask for a new one." });
    if (reset.usedAt) throw gone("This reset link was already used. Ask for a new one.");
    if (reset.expiresAt.getTime() < Date.now()) throw gone("This reset link has expired. Ask for a new one.");
    const now = new Date();
    // The new password ends every existing session and every other outstanding reset link.
    await User.update({ passwordHash, sessionsValidAfter: now }, { where: { id: reset.userId }, transaction });
    await PasswordReset.update({ usedAt: now }, { where: { userId: reset.userId, usedAt: null }, transaction });
    await audit({ action: "user.password_reset", actorId: reset.userId, ip }, transaction);
  });
}
