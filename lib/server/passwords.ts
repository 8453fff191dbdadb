import "server-only";
import bcrypt from "bcryptjs";

const rounds = () => Number(process.env.BCRYPT_ROUNDS || 10);

export const hashPassword = (plain: string) => bcrypt.hash(plain, rounds());
export const checkPassword = (plain: string, hash: string) => bcrypt.compare(plain, hash);

// Compared against when the e-mail is unknown, so a sign-in for a missing account takes as long as
// one with a wrong password and does not reveal which addresses exist.
let dummyHash: string | null = null;
export async function spendPasswordCheck(plain: string): Promise<void> {
  dummyHash ??= await bcrypt.hash("not-a-real-password", rounds());
  await bcrypt.compare(plain, dummyHash);
}
