import { photonTransferBody } from "@/lib/schemas/detector-profile";
import { withDataset } from "@/lib/server/dataset-access";
import { photonTransferOf } from "@/lib/server/detector-profiles";
import { HttpError, parseWith } from "@/lib/server/errors";

// Computes the EMVA 1288 photon-transfer fit of a dataset laid out as a dark pair followed by flat
// pairs, and returns it without saving anything: any member may look. Saving is a POST to the lab's
// detector-profiles with source "measured". The body ({ c }) is optional.
export const POST = withDataset(
  async (request, { dataset }) => {
    const text = await request.text();
    let value: unknown = {};
    if (text.trim()) {
      try {
        value = JSON.parse(text);
      } catch {
        throw new HttpError(400, "invalid_json", "The request body is not valid JSON.");
      }
    }
    const body = parseWith(photonTransferBody, value, "The request body");
    return Response.json(await photonTransferOf(dataset, body));
  },
  { need: "datasets.read" },
);
