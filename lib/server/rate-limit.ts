import "server-only";
import { QueryTypes } from "sequelize";
import { db } from "./db";
import { HttpError } from "./errors";
import { hashToken } from "./tokens";

/** A fixed window: at most `limit` hits per `windowSeconds` for one key. */
export interface RateRule {
  bucket: string;
  limit: number;
  windowSeconds: number;
}

export class RateLimitedError extends HttpError {
  constructor(
    message: string,
    readonly retryAfterSeconds: number,
  ) {
    super(429, "rate_limited", message);
  }
}

/**
 * Counts one hit for `key` in `rule.bucket` and throws a 429 (with Retry-After) once the window's
 * limit is passed. The counter lives in MariaDB (one upsert, atomic per row), so app processes on
 * several machines share it; keys are hashed so no address or e-mail is stored in plain text.
 */
export async function hit(
  rule: RateRule,
  key: string,
  message = "Too many attempts; wait a moment and try again.",
  /** Called once per window, on the first hit past the limit (e.g. to tell an account's owner). */
  onFirstRefusal?: () => Promise<void>,
): Promise<void> {
  const { sequelize } = db();
  const keyHash = hashToken(`${rule.bucket}:${key}`);
  // The window restarts when the stored one is older than windowSeconds; otherwise the count rises.
  await sequelize.query(
    `INSERT INTO rate_limits (bucket, key_hash, window_start, hits) VALUES (?, ?, UTC_TIMESTAMP(3), 1)
     ON DUPLICATE KEY UPDATE
       hits = IF(window_start < UTC_TIMESTAMP(3) - INTERVAL ? SECOND, 1, hits + 1),
       window_start = IF(window_start < UTC_TIMESTAMP(3) - INTERVAL ? SECOND, UTC_TIMESTAMP(3), window_start)`,
    { replacements: [rule.bucket, keyHash, rule.windowSeconds, rule.windowSeconds] },
  );
  const [row] = await sequelize.query<{ hits: number; age: number }>(
    "SELECT hits, TIMESTAMPDIFF(MICROSECOND, window_start, UTC_TIMESTAMP(3)) / 1e6 AS age FROM rate_limits WHERE bucket = ? AND key_hash = ?",
    { replacements: [rule.bucket, keyHash], type: QueryTypes.SELECT },
  );
  if (row && Number(row.hits) > rule.limit) {
    if (Number(row.hits) === rule.limit + 1) await onFirstRefusal?.().catch((error) => console.error("[fluxframe] rate-limit notice failed:", error));
    throw new RateLimitedError(message, Math.max(1, Math.ceil(rule.windowSeconds - Number(row.age))));
  }
}

/** Old windows are useless; removed now and then so the table stays small. */
export async function pruneRateLimits(olderThanSeconds = 86_400): Promise<void> {
  await db().sequelize.query("DELETE FROM rate_limits WHERE window_start < UTC_TIMESTAMP(3) - INTERVAL ? SECOND", {
    replacements: [olderThanSeconds],
  });
}

/**
 * The caller's address for rate limits. Next's server appends the socket's peer address to
 * X-Forwarded-For, so the last entry is the one a client cannot forge (behind a reverse proxy it is
 * the proxy's own view of the client when the proxy appends, as common proxies do).
 */
export function peerAddress(request: Request): string {
  const forwarded = request.headers.get("x-forwarded-for");
  const last = forwarded?.split(",").map((s) => s.trim()).filter(Boolean).at(-1);
  return last || request.headers.get("x-real-ip") || "unknown";
}

const envLimit = (name: string, fallback: number) => {
  const v = Number(process.env[name]);
  return Number.isFinite(v) && v > 0 ? v : fallback;
};

/**
 * Limits on the account routes (our choice; common practice): per address, generous enough for a
 * lab behind one NAT; per account, tight enough to stop password guessing. Each can be changed
 * in .env.
 */
export const accountRules = {
  signInPerAddress: (): RateRule => ({ bucket: "sign-in-ip", limit: envLimit("SIGN_IN_IP_LIMIT", 60), windowSeconds: 600 }),
  signInPerAccount: (): RateRule => ({ bucket: "sign-in-account", limit: envLimit("SIGN_IN_ACCOUNT_LIMIT", 10), windowSeconds: 900 }),
  signUpPerAddress: (): RateRule => ({ bucket: "sign-up-ip", limit: envLimit("SIGN_UP_IP_LIMIT", 20), windowSeconds: 3600 }),
  resetPerAddress: (): RateRule => ({ bucket: "reset-ip", limit: envLimit("RESET_IP_LIMIT", 20), windowSeconds: 3600 }),
  resetPerAccount: (): RateRule => ({ bucket: "reset-account", limit: envLimit("RESET_ACCOUNT_LIMIT", 5), windowSeconds: 3600 }),
};
