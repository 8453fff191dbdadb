import { describe, expect, it } from "vitest";
import { actions, can, grants, isRole, roles, type Action, type Role } from "@/lib/permissions";

// Written out by hand from PRODUCT.md's roles: owner everything, editor uploads/edits/presets/shares,
// viewer reads. A change to the grants must change this table too.
const expected: Record<Action, [viewer: boolean, editor: boolean, owner: boolean]> = {
  "lab.read":           [true,  true,  true],
  "lab.rename":         [false, false, true],
  "members.read":       [true,  true,  true],
  "members.invite":     [false, false, true],
  "members.changeRole": [false, false, true],
  "members.remove":     [false, false, true],
  "audit.read":         [false, false, true],
  "datasets.read":      [true,  true,  true],
  "datasets.upload":    [false, true,  true],
  "datasets.edit":      [false, true,  true],
  "presets.read":       [true,  true,  true],
  "presets.edit":       [false, true,  true],
  "share.create":       [false, true,  true],
  // Detector profiles: every member reads them (lab.read); editors and owners keep them.
  "detectors.edit":     [false, true,  true],
  "checks.configure":   [false, false, true],
};

describe("permissions", () => {
  it("has a row in the expected table for every action and no other", () => {
    expect(Object.keys(expected).sort()).toEqual([...actions].sort());
  });

  const cells = (Object.entries(expected) as [Action, boolean[]][]).flatMap(([action, allowed]) =>
    (["viewer", "editor", "owner"] as const).map((role, i) => ({ role, action, allowed: allowed[i] })),
  );
  it.each(cells)("$role may $action: $allowed", ({ role, action, allowed }) => {
    expect(can(role, action)).toBe(allowed);
  });

  it("lets nobody without a role do anything", () => {
    for (const action of actions) {
      expect(can(null, action)).toBe(false);
      expect(can(undefined, action)).toBe(false);
    }
  });

  it("gives each higher role every action of the roles below it", () => {
    expect(grants.viewer.every((a) => grants.editor.includes(a))).toBe(true);
    expect(grants.editor.every((a) => grants.owner.includes(a))).toBe(true);
  });

  it.each([
    ["owner", true],
    ["viewer", true],
    ["Owner", false],
    ["admin", false],
    ["", false],
    [null, false],
    [1, false],
  ])("recognises %j as a role: %s", (value, ok) => {
    expect(isRole(value)).toBe(ok);
    if (ok) expect(roles).toContain(value as Role);
  });
});
