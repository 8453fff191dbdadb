import "server-only";
import type { Role } from "@/lib/permissions";
import { createReadStream } from "node:fs";
import { join, resolve } from "node:path";
import { DEMO_FILES, writeDemoFiles } from "./demo/generate";
import { db } from "./db";
import { enqueueIngest } from "./jobs";
import { hashPassword } from "./passwords";
import { blobStore } from "./storage";

// Invented demo data for a lab that does not exist: the passwords are deliberately obvious.
export const DEMO_LAB = "Harbourside Membrane Dynamics Lab (demo)";
export const DEMO_USERS: { email: string; name: string; password: string; role: Role; siteAdmin: boolean }[] = [
  { email: "olive.owner@demo.fluxframe.test", name: "Olive Owner (demo)", password: "demo-owner-pass", role: "owner", siteAdmin: true },
  { email: "eddie.editor@demo.fluxframe.test", name: "Eddie Editor (demo)", password: "demo-editor-pass", role: "editor", siteAdmin: false },
  { email: "vera.viewer@demo.fluxframe.test", name: "Vera Viewer (demo)", password: "demo-viewer-pass", role: "viewer", siteAdmin: false },
];

/** Creates the demo lab and its three members; running it again changes nothing. */
export async function seedDemo(options: { datasets?: boolean } = {}): Promise<{ labId: number }> {
  const result = await seedPeople();
  if (options.datasets !== false) await seedDatasets(result.labId);
  return result;
}

const DEMO_EXPERIMENT = "Invented demo: live cells with three stains";

/**
 * Writes the invented demo stacks (lib/server/demo/generate.ts) once, stores each as an original in
 * the blob store and queues its ingest, like an upload would. Files already in the lab are skipped.
 */
async function seedDatasets(labId: number): Promise<void> {
  const { Dataset, User, sequelize } = db();
  const dir = resolve(/* turbopackIgnore: true */ process.cwd(), ".data", "demo-files");
  const files = await writeDemoFiles(dir);
  const owner = await User.findOne({ where: { email: DEMO_USERS[0].email } });
  const store = blobStore();
  for (const meta of Object.values(DEMO_FILES)) {
    if (await Dataset.findOne({ where: { labId, originalName: meta.name } })) continue;
    const file = files.find((f) => f.name === meta.name);
    if (!file) continue;
    const key = `originals/${labId}/demo-${meta.name}`;
    await store.delete(key); // a partial copy from an interrupted seed; finished datasets were skipped above
    const written = await store.put(key, createReadStream(join(dir, meta.name)), { contentType: "image/tiff" });
    const isOme = meta.name.endsWith(".ome.tif");
    await sequelize.transaction(async (transaction) => {
      const dataset = await Dataset.create(
        {
          labId,
          uploadedById: owner?.id ?? null,
          title: meta.title,
          originalName: meta.name,
          status: "queued",
          sizeBytes: written.size,
          sha256: written.sha256,
          blobKey: key,
          experiment: DEMO_EXPERIMENT,
          notes: `Invented data written by Fluxframe's demo generator, not a real acquisition. Page order: ${meta.pageOrder}.`,
          tags: ["demo"],
          // Files without OME-XML carry the dimensions an uploader would type (plain stack: channel fastest).
          ...(isOme ? {} : { sizeC: meta.sizeC, sizeZ: meta.sizeZ, sizeT: meta.sizeT, dimensionOrder: "XYCZT", physicalSizeX: 0.325, physicalSizeY: 0.325 }),
        },
        { transaction },
      );
      await enqueueIngest(dataset.id, transaction);
    });
  }
}

async function seedPeople(): Promise<{ labId: number }> {
  const { User, Lab, Membership, sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    const users = [];
    for (const demo of DEMO_USERS) {
      let user = await User.findOne({ where: { email: demo.email }, transaction });
      user ??= await User.create(
        { email: demo.email, name: demo.name, passwordHash: await hashPassword(demo.password), isSiteAdmin: demo.siteAdmin },
        { transaction },
      );
      users.push({ user, role: demo.role });
    }
    let lab = await Lab.findOne({ where: { name: DEMO_LAB }, transaction });
    lab ??= await Lab.create({ name: DEMO_LAB, createdById: users[0].user.id }, { transaction });
    for (const { user, role } of users) {
      await Membership.findOrCreate({ where: { labId: lab.id, userId: user.id }, defaults: { labId: lab.id, userId: user.id, role }, transaction });
    }
    return { labId: lab.id };
  });
}
