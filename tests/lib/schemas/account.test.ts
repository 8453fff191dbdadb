import { describe, expect, it } from "vitest";
import { email, resetPasswordBody, signUpBody } from "@/lib/schemas/account";

describe("e-mail", () => {
  it("trims and lower-cases an address so one person has one account", () => {
    expect(email.parse("  Ada.Lovelace@Example.TEST ")).toBe("ada.lovelace@example.test");
  });

  it.each(["", "   ", "plain", "a@", "@example.test", "a b@example.test", `${"a".repeat(250)}@example.test`])(
    "rejects %j",
    (value) => {
      expect(email.safeParse(value).success).toBe(false);
    },
  );

  it("accepts 254 characters and rejects 255", () => {
    const domain = `${"b".repeat(63)}.${"c".repeat(63)}.${"d".repeat(61)}`;
    const at254 = `${"a".repeat(64)}@${domain}`;
    expect(at254.length).toBe(254);
    expect(email.safeParse(at254).success).toBe(true);
    expect(email.safeParse(`a${at254}`).success).toBe(false);
  });
});

describe("sign-up body", () => {
  const valid = { name: "Ada", email: "ada@example.test", password: "ten-chars!" };

  it("accepts a 10-character password and a 120-character name", () => {
    expect(signUpBody.safeParse({ ...valid, name: "n".repeat(120) }).success).toBe(true);
  });

  it.each([
    ["a 9-character password", { password: "nine-char" }, "password"],
    ["a 201-character password", { password: "p".repeat(201) }, "password"],
    ["a 121-character name", { name: "n".repeat(121) }, "name"],
    ["a blank name", { name: "  " }, "name"],
    ["a missing e-mail", { email: undefined }, "email"],
  ])("rejects %s on that field", (_, override, field) => {
    const result = signUpBody.safeParse({ ...valid, ...override });
    expect(result.success).toBe(false);
    expect(result.error!.issues.map((i) => i.path[0])).toEqual([field]);
  });
});

describe("reset body", () => {
  it("requires a token of 20 to 200 characters", () => {
    const password = "long-enough-password";
    expect(resetPasswordBody.safeParse({ token: "t".repeat(19), password }).success).toBe(false);
    expect(resetPasswordBody.safeParse({ token: "t".repeat(20), password }).success).toBe(true);
    expect(resetPasswordBody.safeParse({ token: "t".repeat(201), password }).success).toBe(false);
  });
});
