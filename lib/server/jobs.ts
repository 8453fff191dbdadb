import "server-only";
import { hostname } from "node:os";
import { QueryTypes } from "sequelize";
import { db } from "./db";
import { IngestError, ingestDataset } from "./ingest";

// Any number of worker processes claim jobs from MariaDB; SKIP LOCKED lets them pass over rows another
// worker holds instead of waiting. A running job whose heartbeat is older than STALE_SECONDS belonged
// to a worker that died (restart, kill): it is claimed again and redone from the start. A live worker
// beats at least every few hundred milliseconds while it reads planes, so a minute is a wide margin;
// JOB_STALE_SECONDS (≥ 5) shortens it where a quicker takeover matters more (the restart test).
export function staleSeconds(value: string | undefined): number {
  const n = Number(value);
  return value !== undefined && value.trim() !== "" && Number.isInteger(n) && n >= 5 ? n : 60;
}
const STALE_SECONDS = staleSeconds(process.env.JOB_STALE_SECONDS);
const MAX_ATTEMPTS = 3;

export const workerId = () => `${hostname()}:${process.pid}`;

export async function enqueueIngest(datasetId: number, transaction?: import("sequelize").Transaction): Promise<void> {
  await db().Job.create({ kind: "ingest", datasetId, status: "queued" }, { transaction });
}

/** Claims the oldest runnable job, or returns null. */
export async function claimJob(worker: string): Promise<{ id: number; datasetId: number; attempts: number } | null> {
  const { sequelize } = db();
  return sequelize.transaction(async (transaction) => {
    const rows = await sequelize.query<{ id: number; dataset_id: number; attempts: number }>(
      `SELECT id, dataset_id, attempts FROM jobs
        WHERE status = 'queued' OR (status = 'running' AND heartbeat_at < UTC_TIMESTAMP() - INTERVAL ${STALE_SECONDS} SECOND)
        ORDER BY id LIMIT 1 FOR UPDATE SKIP LOCKED`,
      { type: QueryTypes.SELECT, transaction },
    );
    const row = rows[0];
    if (!row) return null;
    await sequelize.query(
      `UPDATE jobs SET status = 'running', locked_by = ?, heartbeat_at = UTC_TIMESTAMP(), attempts = attempts + 1, updated_at = UTC_TIMESTAMP() WHERE id = ?`,
      { replacements: [worker, row.id], transaction },
    );
    return { id: row.id, datasetId: row.dataset_id, attempts: row.attempts + 1 };
  });
}

/** Runs one claimed ingest job to the end, keeping its heartbeat and the dataset's progress fresh. */
export async function runJob(job: { id: number; datasetId: number; attempts: number }): Promise<"done" | "failed" | "retry"> {
  const { Job, Dataset } = db();
  await Dataset.update({ status: "ingesting", progressDone: 0, failureReason: null }, { where: { id: job.datasetId } });
  let lastBeat = 0;
  try {
    await ingestDataset(job.datasetId, {
      onProgress: async (done, total) => {
        const now = Date.now();
        if (now - lastBeat < 500 && done < total) return;
        lastBeat = now;
        await Dataset.update({ progressDone: done, progressTotal: total }, { where: { id: job.datasetId } });
        await Job.update({ heartbeatAt: new Date() }, { where: { id: job.id } });
      },
    });
    await Job.update({ status: "done", error: null }, { where: { id: job.id } });
    return "done";
  } catch (error) {
    const message = error instanceof Error ? error.message : String(error);
    const final = error instanceof IngestError || job.attempts >= MAX_ATTEMPTS;
    if (!(error instanceof IngestError)) console.error(`[fluxframe] ingest job ${job.id} failed (attempt ${job.attempts}):`, error);
    await Job.update({ status: final ? "failed" : "queued", error: message.slice(0, 2000) }, { where: { id: job.id } });
    await Dataset.update(
      final
        ? { status: "failed", failureReason: error instanceof IngestError ? message : `Ingest failed: ${message}` }
        : { status: "queued" },
      { where: { id: job.datasetId } },
    );
    return final ? "failed" : "retry";
  }
}

/** The loop of an ingest worker process: claim, run, repeat; idle polling every `idleMs`. */
export async function workLoop(signal: AbortSignal, idleMs = 500): Promise<void> {
  const worker = workerId();
  while (!signal.aborted) {
    let job = null;
    try {
      job = await claimJob(worker);
    } catch (error) {
      console.error("[fluxframe] could not claim a job:", error instanceof Error ? error.message : error);
    }
    if (!job) {
      await new Promise((r) => setTimeout(r, idleMs));
      continue;
    }
    // One line per claim and per outcome: with workers on several machines the logs show who did what.
    console.log(`[fluxframe] worker ${worker} claimed job ${job.id} (dataset ${job.datasetId}, attempt ${job.attempts})`);
    const outcome = await runJob(job);
    console.log(`[fluxframe] worker ${worker} finished job ${job.id}: ${outcome}`);
  }
}
