// Who may do what in a lab. Permissions are data: one list of actions and one role → actions table;
// the server's access helper and the client's UI both read it, so a hidden button and a 403 agree.

export const roles = ["viewer", "editor", "owner"] as const;
export type Role = (typeof roles)[number];

export const actions = [
  "lab.read",
  "lab.rename",
  "members.read",
  "members.invite",
  "members.changeRole",
  "members.remove",
  "audit.read",
  "datasets.read",
  "datasets.upload",
  "datasets.edit",
  "presets.read",
  "presets.edit",
  "share.create",
  "detectors.edit",
  "checks.configure",
] as const;
export type Action = (typeof actions)[number];

const viewer: readonly Action[] = ["lab.read", "members.read", "datasets.read", "presets.read"];
const editor: readonly Action[] = [...viewer, "datasets.upload", "datasets.edit", "presets.edit", "share.create", "detectors.edit"];
const owner: readonly Action[] = actions;

export const grants: Record<Role, readonly Action[]> = { viewer, editor, owner };

export const roleLabels: Record<Role, string> = { owner: "Owner", editor: "Editor", viewer: "Viewer" };

export function can(role: Role | null | undefined, action: Action): boolean {
  return role != null && grants[role].includes(action);
}

export function isRole(value: unknown): value is Role {
  return typeof value === "string" && (roles as readonly string[]).includes(value);
}
