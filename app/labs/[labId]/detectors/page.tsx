import { EmptyState, PageHeader } from "@/components/ui/states";

export const metadata = { title: "Detectors" };

export default function Page() {
  return (
    <>
      <PageHeader title="Detectors" description="The lab's camera profiles: gain, offset, read noise and saturation capacity." />
      <EmptyState title="No detector profiles yet">Detector profiles are not part of this version of Fluxframe yet.</EmptyState>
    </>
  );
}
