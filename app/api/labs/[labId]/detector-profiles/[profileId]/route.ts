import { updateDetectorProfileBody } from "@/lib/schemas/detector-profile";
import { withLab } from "@/lib/server/access";
import { clientIp } from "@/lib/server/audit";
import { deleteDetectorProfile, detectorProfileId, getDetectorProfile, updateDetectorProfile } from "@/lib/server/detector-profiles";
import { parseBody } from "@/lib/server/errors";

export const GET = withLab(
  async (_request, { lab, params }) => Response.json({ profile: await getDetectorProfile(lab.id, detectorProfileId(params.profileId)) }),
  { need: "lab.read" },
);

// The body names the version it was based on; a stale one gets 409 with the current profile.
export const PATCH = withLab(
  async (request, { lab, user, role, params }) => {
    const id = detectorProfileId(params.profileId);
    const body = await parseBody(request, updateDetectorProfileBody);
    const outcome = await updateDetectorProfile({ userId: user.id, role, labId: lab.id }, id, body);
    if (outcome.ok) return Response.json({ profile: outcome.profile });
    return Response.json(
      { error: { code: "conflict", message: "Someone else saved this detector profile since you opened it; reload to see their version." }, current: outcome.current },
      { status: 409 },
    );
  },
  { need: "detectors.edit" },
);

// Datasets that named the profile are left without one.
export const DELETE = withLab(
  async (request, { lab, user, role, params }) => {
    await deleteDetectorProfile({ userId: user.id, role, labId: lab.id }, detectorProfileId(params.profileId), clientIp(request));
    return new Response(null, { status: 204 });
  },
  { need: "detectors.edit" },
);
