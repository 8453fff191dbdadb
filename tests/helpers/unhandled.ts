import { afterEach, beforeEach } from "vitest";

/**
 * Collects the promise rejections nobody handled during each test of the enclosing describe block,
 * so a test can assert there were none (a failing block must not leave a stray rejection behind).
 */
export function collectUnhandledRejections(): unknown[] {
  const unhandled: unknown[] = [];
  const onUnhandled = (reason: unknown) => unhandled.push(reason);
  beforeEach(() => {
    unhandled.length = 0;
    process.on("unhandledRejection", onUnhandled);
  });
  afterEach(() => {
    process.off("unhandledRejection", onUnhandled);
  });
  return unhandled;
}
