import { listDatasetsQuery } from "@/lib/schemas/dataset";
import { withLab } from "@/lib/server/access";
import { listDatasets } from "@/lib/server/datasets";
import { parseWith } from "@/lib/server/errors";

export const GET = withLab(
  async (request, { lab }) => {
    const query = parseWith(listDatasetsQuery, Object.fromEntries(request.nextUrl.searchParams), "The filter");
    return Response.json(await listDatasets(lab.id, query));
  },
  { need: "datasets.read" },
);
