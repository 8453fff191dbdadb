import { z } from "zod";
import { email } from "./account";
import { viewStateBody } from "./preset";

// View links (a token that opens an immutable snapshot of a view) and saved views (named snapshots
// listed on the dataset page). The snapshot is a view state (lib/schemas/preset.ts).

export const linkAccess = z.enum(["anyone", "lab", "emails"], { message: "Choose who may open the link." });
export type LinkAccessChoice = z.infer<typeof linkAccess>;

export const DEFAULT_LINK_DAYS = 30;
export const MAX_LINK_DAYS = 365;

export const createLinkBody = z
  .strictObject({
    state: viewStateBody,
    access: linkAccess,
    /** Addresses that may open the link after signing in (access = "emails"). */
    emails: z.array(email).max(50, "At most 50 addresses.").optional(),
    /** Days until the link stops working; null = never, allowed only for lab-member links. */
    expiresInDays: z.number().int().min(1, "At least 1 day.").max(MAX_LINK_DAYS, `At most ${MAX_LINK_DAYS} days.`).nullable().default(DEFAULT_LINK_DAYS),
    allowDownload: z.boolean().default(false),
    /** Send the link by e-mail to these addresses once it is made. */
    sendTo: z.array(email).max(20, "At most 20 addresses.").optional(),
    note: z.string().trim().max(500, "At most 500 characters.").optional(),
  })
  .superRefine((body, ctx) => {
    if (body.access === "emails" && !body.emails?.length) {
      ctx.addIssue({ code: "custom", path: ["emails"], message: "List at least one address that may open the link." });
    }
    if (body.expiresInDays === null && body.access !== "lab") {
      ctx.addIssue({ code: "custom", path: ["expiresInDays"], message: "Only links for lab members may never expire." });
    }
  });
export type CreateLinkBody = z.infer<typeof createLinkBody>;

export const LinkOut = z.object({
  id: z.number(),
  datasetId: z.number(),
  createdBy: z.string().nullable(),
  access: linkAccess,
  emails: z.array(z.string()).nullable(),
  allowDownload: z.boolean(),
  expiresAt: z.string().nullable(),
  revokedAt: z.string().nullable(),
  opens: z.number(),
  lastOpenedAt: z.string().nullable(),
  createdAt: z.string(),
  status: z.enum(["active", "expired", "revoked"]),
  state: viewStateBody,
});
export type LinkOut = z.infer<typeof LinkOut>;

export const savedViewName = z.string().trim().min(1, "The view needs a name.").max(120, "At most 120 characters.");
export const createSavedViewBody = z.strictObject({ name: savedViewName, state: viewStateBody });
export type CreateSavedViewBody = z.infer<typeof createSavedViewBody>;

export const SavedViewOut = z.object({
  id: z.number(),
  datasetId: z.number(),
  name: z.string(),
  owner: z.string().nullable(),
  ownerId: z.number().nullable(),
  state: viewStateBody,
  createdAt: z.string(),
});
export type SavedViewOut = z.infer<typeof SavedViewOut>;
