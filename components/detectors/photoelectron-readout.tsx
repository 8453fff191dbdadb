import { photoelectrons } from "@/lib/imaging/photon-transfer";
import type { DetectorSummary } from "@/lib/schemas/detector-profile";

/**
 * The bench readout's photoelectrons next to a raw value, when the dataset names a detector profile:
 * (DN − offset) / K (EMVA 1288 linear model). Below the offset the number is negative: read noise
 * around the dark level, shown as it is rather than clipped.
 */
export function PhotoelectronReadout({ dn, detector }: { dn: number; detector: DetectorSummary | null | undefined }) {
  if (!detector) return null;
  const e = photoelectrons(dn, detector.offsetDn, detector.gainDnPerE);
  return (
    <span className="text-graphite-200" title={`Detector profile ${detector.name}: (DN − ${detector.offsetDn} DN) / ${detector.gainDnPerE} DN/e⁻`}>
      {" "}
      ≈ <strong className="font-semibold text-white">{e.toFixed(Math.abs(e) < 100 ? 1 : 0)}</strong> <span className="text-graphite-300">e⁻</span>
    </span>
  );
}
