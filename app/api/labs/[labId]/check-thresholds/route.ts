import { checkThresholdsBody } from "@/lib/schemas/checks";
import { withLab } from "@/lib/server/access";
import { clientIp } from "@/lib/server/audit";
import { saveThresholds } from "@/lib/server/checks";
import { parseBody } from "@/lib/server/errors";

// The lab owner sets the limits behind "ready", "caution" and "re-image" (fractions of pixels).
export const PUT = withLab(
  async (request, { lab, user }) => {
    const body = await parseBody(request, checkThresholdsBody);
    return Response.json({ thresholds: await saveThresholds(lab, user.id, body, clientIp(request)) });
  },
  { need: "checks.configure" },
);
