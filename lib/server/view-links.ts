import "server-only";
import { Op } from "sequelize";
import { can, type Role } from "@/lib/permissions";
import { viewStateBody, type ViewStateBody } from "@/lib/schemas/preset";
import { LinkOut, SavedViewOut, type CreateLinkBody, type CreateSavedViewBody } from "@/lib/schemas/view-link";
import type { DatasetOut } from "@/lib/schemas/dataset";
import type { Dataset, SavedView, ViewLink } from "@/models";
import type { SessionUser } from "./access";
import { audit } from "./audit";
import { channelStats, datasetIncludes, datasetOut } from "./datasets";
import { db } from "./db";
import { conflict, forbidden, gone, notFound, unauthenticated } from "./errors";
import { renderViewPng } from "./link-preview";
import { appUrl, sendMail } from "./mail";
import { checkAgainstDataset } from "./presets";
import { hit, type RateRule } from "./rate-limit";
import { blobStore } from "./storage";
import { hashToken, newToken, sameHash } from "./tokens";

interface Actor {
  user: SessionUser;
  role: Role;
}

// Opening links is rate limited per address and per address and link (a person reloading one link
// is fine; one address walking through many is not). Unknown tokens count against a tighter limit:
// guessing 256-bit tokens is hopeless anyway, this keeps the log quiet. Limits: our choice.
const envLimit = (name: string, fallback: number) => {
  const v = Number(process.env[name]);
  return Number.isFinite(v) && v > 0 ? v : fallback;
};
export const linkOpenRule = (): RateRule => ({ bucket: "link-open", limit: envLimit("LINK_OPEN_LIMIT", 120), windowSeconds: 60 });
export const linkOpenPerLinkRule = (): RateRule => ({ bucket: "link-open-1", limit: envLimit("LINK_OPEN_PER_LINK_LIMIT", 30), windowSeconds: 60 });
export const linkMissRule = (): RateRule => ({ bucket: "link-miss", limit: envLimit("LINK_MISS_LIMIT", 20), windowSeconds: 60 });

export const linkPath = (token: string) => `/v/${token}`;

function statusOf(link: ViewLink, now = new Date()): "active" | "expired" | "revoked" {
  if (link.revokedAt) return "revoked";
  if (link.expiresAt && link.expiresAt.getTime() <= now.getTime()) return "expired";
  return "active";
}

function linkOut(link: ViewLink & { createdBy?: { name: string } | null }): LinkOut {
  return LinkOut.parse({
    id: link.id,
    datasetId: link.datasetId,
    createdBy: link.createdBy?.name ?? null,
    access: link.access,
    emails: link.emails,
    allowDownload: Boolean(link.allowDownload),
    expiresAt: link.expiresAt?.toISOString() ?? null,
    revokedAt: link.revokedAt?.toISOString() ?? null,
    opens: link.opens,
    lastOpenedAt: link.lastOpenedAt?.toISOString() ?? null,
    createdAt: link.createdAt.toISOString(),
    status: statusOf(link),
    state: viewStateBody.parse(link.state),
  });
}

/**
 * Makes a link to an immutable snapshot. The plain token is returned once (for the dialog and the
 * e-mail) and never stored: the row keeps its SHA-256. The preview image is rendered before the row
 * is written, so a link never points at a missing preview; a preview that cannot be rendered is left
 * out rather than failing the link.
 */
export async function createLink(actor: Actor, dataset: Dataset, body: CreateLinkBody, ip: string | null) {
  if (!can(actor.role, "share.create")) throw forbidden("Only editors and owners create view links.");
  if (dataset.status !== "ready") throw conflict("The dataset is not ready to view yet.");
  checkAgainstDataset(dataset, body.state);
  const { token, hash } = newToken();
  let previewKey: string | null = null;
  try {
    const png = await renderViewPng(dataset, body.state);
    previewKey = `derived/${dataset.id}/link-${hash.slice(0, 16)}.png`;
    await blobStore().put(previewKey, png, { contentType: "image/png" });
  } catch (error) {
    console.error("[fluxframe] link preview not rendered:", error);
    previewKey = null;
  }
  const expiresAt = body.expiresInDays === null ? null : new Date(Date.now() + body.expiresInDays * 86_400_000);
  const link = await db().sequelize.transaction(async (transaction) => {
    const row = await db().ViewLink.create(
      {
        datasetId: dataset.id,
        createdById: actor.user.id,
        tokenHash: hash,
        state: body.state,
        access: body.access,
        emails: body.access === "emails" ? [...new Set(body.emails)] : null,
        allowDownload: body.allowDownload,
        expiresAt,
        previewKey,
      },
      { transaction },
    );
    await audit(
      { action: "link.created", labId: dataset.labId, actorId: actor.user.id, target: `dataset:${dataset.id} link:${row.id}`, ip, detail: { access: body.access, expiresAt, allowDownload: body.allowDownload } },
      transaction,
    );
    return row;
  });
  const url = appUrl(linkPath(token));
  const sent: string[] = [];
  const failed: string[] = [];
  for (const to of new Set(body.sendTo ?? [])) {
    try {
      await sendMail({
        to,
        subject: `${actor.user.name} shared a view of "${dataset.title}"`,
        text: [
          `${actor.user.name} shared a view of the dataset "${dataset.title}" with you on Fluxframe.`,
          body.note ? `\nTheir note: ${body.note}\n` : "",
          `Open it: ${url}`,
          expiresAt ? `The link works until ${expiresAt.toUTCString()}.` : "The link does not expire.",
          body.access === "lab" ? "Sign in as a member of the lab to open it." : body.access === "emails" ? "Sign in with this address to open it." : "",
          `\nPreview image: ${appUrl(`/api/v/${token}/preview`)}`,
          "\nThe view is a display mapping of the stored counts, not the data itself.",
        ]
          .filter(Boolean)
          .join("\n"),
      });
      sent.push(to);
    } catch (error) {
      console.error("[fluxframe] link e-mail not sent:", error);
      failed.push(to);
    }
  }
  const withCreator = Object.assign(link, { createdBy: { name: actor.user.name } });
  return { link: linkOut(withCreator), token, url, sent, failed };
}

export async function listLinks(dataset: Dataset): Promise<LinkOut[]> {
  const rows = await db().ViewLink.findAll({
    where: { datasetId: dataset.id },
    include: [{ association: "createdBy", attributes: ["name"] }],
    order: [["createdAt", "DESC"], ["id", "DESC"]],
  });
  return rows.map((row) => linkOut(row as ViewLink & { createdBy?: { name: string } | null }));
}

/** Revocation takes effect at once: every later open answers 410. Revoking twice changes nothing. */
export async function revokeLink(actor: Actor, dataset: Dataset, linkId: number, ip: string | null): Promise<LinkOut> {
  const { ViewLink: Link, sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    const link = await Link.findOne({ where: { id: linkId, datasetId: dataset.id }, transaction, lock: transaction.LOCK.UPDATE });
    if (!link) throw notFound("That link");
    if (link.createdById !== actor.user.id && !can(actor.role, "share.create")) throw forbidden("Only the link's maker, editors and owners revoke links.");
    if (!link.revokedAt) {
      await link.update({ revokedAt: new Date(), revokedById: actor.user.id }, { transaction });
      await audit({ action: "link.revoked", labId: dataset.labId, actorId: actor.user.id, target: `dataset:${dataset.id} link:${link.id}`, ip }, transaction);
    }
    const creator = link.createdById ? await db().User.findByPk(link.createdById, { attributes: ["name"], transaction }) : null;
    return linkOut(Object.assign(link, { createdBy: creator ? { name: creator.name } : null }));
  });
}

// ---- Opening a link ----------------------------------------------------------------------------

export interface OpenedLink {
  link: ViewLink;
  dataset: Dataset;
  /** The viewer's role in the dataset's lab, when signed in and a member. */
  role: Role | null;
}

const TOKEN_SHAPE = /^[A-Za-z0-9_-]{43}$/;

/**
 * Finds the link for a token and checks who may open it. The token is looked up by its SHA-256 (the
 * plain token is never in the database) and the stored hash compared again in constant time.
 * Unknown → 404; revoked or expired → 410; lab-only or address-only links need a signed-in person
 * (401) who is a member or a listed address (403). `open` counts the visit and applies the rate limits.
 */
export async function resolveLink(token: string, viewer: SessionUser | null, options: { ip: string; open?: boolean }): Promise<OpenedLink> {
  const hash = hashToken(token);
  const link = TOKEN_SHAPE.test(token) ? await db().ViewLink.findOne({ where: { tokenHash: hash } }) : null;
  if (!link || !sameHash(link.tokenHash, hash)) {
    await hit(linkMissRule(), options.ip);
    throw notFound("That link");
  }
  if (options.open) {
    await hit(linkOpenRule(), options.ip, "Too many links opened from this address; wait a minute and try again.");
    await hit(linkOpenPerLinkRule(), `${options.ip}:${link.id}`, "This link was opened too often from this address; wait a minute and try again.");
  }
  const status = statusOf(link);
  if (status === "revoked") throw gone("This link was revoked by the lab that made it.");
  if (status === "expired") throw gone("This link has expired.");
  // With the detector profile, so a guest's readout shows photoelectrons as a member's does.
  const dataset = await db().Dataset.findOne({ where: { id: link.datasetId, deletedAt: { [Op.is]: null } }, include: datasetIncludes() });
  if (!dataset) throw gone("The dataset behind this link is no longer available.");
  const membership = viewer ? await db().Membership.findOne({ where: { labId: dataset.labId, userId: viewer.id } }) : null;
  const role = membership?.role ?? null;
  if (link.access !== "anyone") {
    if (!viewer) throw unauthenticated();
    const listed = link.access === "emails" && (link.emails ?? []).includes(viewer.email.toLowerCase());
    // Lab members may open address-only links too: they can see the dataset anyway.
    if (!role && !listed) {
      throw forbidden(link.access === "lab" ? "This link is for members of the lab that made it." : "This link is for the addresses it was sent to; sign in with one of them.");
    }
  }
  if (options.open) {
    await db().ViewLink.update(
      { opens: db().sequelize.literal("opens + 1") as unknown as number, lastOpenedAt: new Date() },
      { where: { id: link.id } },
    );
    await audit({ action: "link.opened", labId: dataset.labId, actorId: viewer?.id ?? null, target: `dataset:${dataset.id} link:${link.id}`, ip: options.ip });
  }
  return { link, dataset, role };
}

/**
 * What a link's page needs: the snapshot and the dataset's viewing metadata. Lab notes, sample and
 * treatment fields and the uploader's name stay with the lab; a link shares a view, not the records.
 */
export async function linkView({ link, dataset, role }: OpenedLink, viewer: SessionUser | null) {
  const full = datasetOut(dataset);
  const shared: DatasetOut = role
    ? full
    : { ...full, notes: null, experiment: null, sample: null, treatment: null, tags: [], uploadedBy: null, acquisition: null };
  return {
    link: {
      access: link.access,
      allowDownload: Boolean(link.allowDownload),
      expiresAt: link.expiresAt?.toISOString() ?? null,
      state: viewStateBody.parse(link.state) as ViewStateBody,
    },
    dataset: shared,
    channelStats: await channelStats(dataset.id),
    viewer: viewer ? { name: viewer.name, role, canSaveAsMine: Boolean(role) } : null,
  };
}

// ---- Saved views -------------------------------------------------------------------------------

function savedViewOut(view: SavedView & { owner?: { name: string } | null }): SavedViewOut {
  return SavedViewOut.parse({
    id: view.id,
    datasetId: view.datasetId,
    name: view.name,
    owner: view.owner?.name ?? null,
    ownerId: view.ownerId,
    state: view.state,
    createdAt: view.createdAt.toISOString(),
  });
}

export async function listSavedViews(dataset: Dataset): Promise<SavedViewOut[]> {
  const rows = await db().SavedView.findAll({
    where: { datasetId: dataset.id },
    include: [{ association: "owner", attributes: ["name"] }],
    order: [["name", "ASC"], ["id", "ASC"]],
  });
  return rows.map((row) => savedViewOut(row as SavedView & { owner?: { name: string } | null }));
}

/** Any member may name a view; names are unique per dataset (the database's collation decides). */
export async function createSavedView(actor: Actor, dataset: Dataset, body: CreateSavedViewBody): Promise<SavedViewOut> {
  checkAgainstDataset(dataset, body.state);
  try {
    const row = await db().SavedView.create({ datasetId: dataset.id, ownerId: actor.user.id, name: body.name, state: body.state });
    return savedViewOut(Object.assign(row, { owner: { name: actor.user.name } }));
  } catch (error) {
    if (error instanceof Error && error.name === "SequelizeUniqueConstraintError") {
      throw conflict("A saved view with that name already exists for this dataset.", { name: "That name is already taken." });
    }
    throw error;
  }
}

/** The person who saved a view removes it, or an editor/owner tidying the list. */
export async function deleteSavedView(actor: Actor, dataset: Dataset, viewId: number): Promise<void> {
  const row = await db().SavedView.findOne({ where: { id: viewId, datasetId: dataset.id } });
  if (!row) throw notFound("That saved view");
  if (row.ownerId !== actor.user.id && !can(actor.role, "datasets.edit")) throw forbidden("Only the person who saved it, editors and owners delete a saved view.");
  await row.destroy();
}
