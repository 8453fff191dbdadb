import { createDetectorProfileBody } from "@/lib/schemas/detector-profile";
import { withLab } from "@/lib/server/access";
import { clientIp } from "@/lib/server/audit";
import { createDetectorProfile, listDetectorProfiles } from "@/lib/server/detector-profiles";
import { parseBody } from "@/lib/server/errors";

// Every member reads the lab's detector profiles; editors and owners add them (typed or measured).
export const GET = withLab(async (_request, { lab }) => Response.json({ profiles: await listDetectorProfiles(lab.id) }), { need: "lab.read" });

export const POST = withLab(
  async (request, { lab, user, role }) => {
    const body = await parseBody(request, createDetectorProfileBody);
    return Response.json({ profile: await createDetectorProfile({ userId: user.id, role, labId: lab.id }, body, clientIp(request)) }, { status: 201 });
  },
  { need: "detectors.edit" },
);
