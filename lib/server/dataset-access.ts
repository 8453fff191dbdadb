import "server-only";
import type { NextRequest } from "next/server";
import type { Action } from "@/lib/permissions";
import { idParam } from "@/lib/schemas/lab";
import type { Dataset } from "@/models";
import { requireLabAccess, requireUser, type LabAccess } from "./access";
import { findDataset } from "./datasets";
import { db } from "./db";
import { errorResponse, HttpError, notFound } from "./errors";

type Params = Record<string, string | string[] | undefined>;

/**
 * Access to /api/datasets/[datasetId]/…: the dataset's lab decides, through the same helper as every
 * lab route. A dataset of a lab the caller is not in is a 404, like an unknown id.
 */
export function withDataset(
  handler: (request: NextRequest, ctx: LabAccess & { dataset: Dataset; params: Params }) => Promise<Response>,
  options: { need: Action; includeDeleted?: boolean },
) {
  return async (request: NextRequest, context: { params: Promise<Params> }) => {
    try {
      const params = await context.params;
      const user = await requireUser();
      const id = idParam.safeParse(params.datasetId);
      if (!id.success) throw notFound("That dataset");
      const row = await db().Dataset.findByPk(id.data, { attributes: ["id", "labId"] });
      if (!row) throw notFound("That dataset");
      // A non-member gets the same 404 as for an id that does not exist, so existence does not leak.
      const access = await requireLabAccess(row.labId, options.need, user).catch((error: unknown) => {
        throw error instanceof HttpError && error.status === 404 ? notFound("That dataset") : error;
      });
      const dataset = await findDataset(row.labId, row.id, { deleted: options.includeDeleted });
      return await handler(request, { ...access, dataset, params });
    } catch (error) {
      return errorResponse(error);
    }
  };
}
