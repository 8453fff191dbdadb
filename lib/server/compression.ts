import "server-only";
import { Op } from "sequelize";
import { compressionRatios, type CodecGroup } from "@/lib/imaging/planner";
import { CompressionOut } from "@/lib/schemas/planner";
import { db } from "./db";

/**
 * How well the lab's own files compress, per codec: the raw pixel bytes (width · height · planes ·
 * bytes per sample) against the stored file size, summed over the lab's ready datasets (not in the
 * bin, not lossy). The stored size includes headers and metadata, so uncompressed files come out
 * slightly below 1×. Summed in SQL so the cost does not grow with what is returned.
 */
export async function compressionByCodec(labId: number): Promise<CompressionOut> {
  const { Dataset, sequelize } = db();
  const rows = (await Dataset.findAll({
    attributes: [
      "compression",
      [sequelize.fn("COUNT", sequelize.col("id")), "datasets"],
      [sequelize.literal("SUM(CAST(width AS DECIMAL(40,0)) * height * plane_count * CEIL(bits_per_sample / 8))"), "rawBytes"],
      [sequelize.fn("SUM", sequelize.col("size_bytes")), "storedBytes"],
    ],
    where: {
      labId,
      status: "ready",
      deletedAt: null,
      lossy: false,
      width: { [Op.ne]: null },
      height: { [Op.ne]: null },
      planeCount: { [Op.ne]: null },
      bitsPerSample: { [Op.ne]: null },
    },
    group: ["compression"],
    raw: true,
  })) as unknown as { compression: string | null; datasets: number | string; rawBytes: number | string | bigint; storedBytes: number | string | bigint }[];
  // The driver answers COUNT as a bigint and SUM as a DECIMAL string: numbers (< 2^53 for any real lab).
  const groups: CodecGroup[] = rows.map((r) => ({
    codec: r.compression ?? "unknown",
    datasets: Number(r.datasets),
    rawBytes: Number(r.rawBytes),
    storedBytes: Number(r.storedBytes),
  }));
  return CompressionOut.parse(compressionRatios(groups));
}
