import { withLab } from "@/lib/server/access";
import { labChecks } from "@/lib/server/checks";

// Every ready dataset's verdicts for the lab's Checks page, with the limits in force.
export const GET = withLab(async (_request, { lab }) => Response.json(await labChecks(lab)), { need: "datasets.read" });
