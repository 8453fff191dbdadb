import { withDataset } from "@/lib/server/dataset-access";
import { conflict } from "@/lib/server/errors";
import { datasetCheck, saturationSeries, thresholdsOf } from "@/lib/server/checks";
import { db } from "@/lib/server/db";

// The acquisition check of one dataset (computed from the ingest statistics on every read) and the
// per-plane saturated and zero fractions for the report's plots.
export const GET = withDataset(
  async (_request, { dataset }) => {
    const lab = await db().Lab.findByPk(dataset.labId);
    const check = lab ? await datasetCheck(dataset, thresholdsOf(lab)) : null;
    if (!check) throw conflict("The dataset is not read yet; its check follows once ingest is done.");
    const channelStats = await db().ChannelStat.findAll({ where: { datasetId: dataset.id }, attributes: ["c", "histogram"], order: [["c", "ASC"]] });
    return Response.json({
      check: { ...check, channels: check.channels.map((ch) => ({ ...ch, headroom: Number.isFinite(ch.headroom) ? ch.headroom : null })) },
      series: await saturationSeries(dataset),
      histograms: channelStats.map((s) => ({ c: s.c, histogram: s.histogram })),
    });
  },
  { need: "datasets.read" },
);
