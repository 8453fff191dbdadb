import { EmptyState, PageHeader } from "@/components/ui/states";

export const metadata = { title: "Presets" };

export default function Page() {
  return (
    <>
      <PageHeader title="Presets" description="Named sets of channel mappings (black and white points, colour tables) that you can apply to any dataset." />
      <EmptyState title="No presets yet">Presets are not part of this version of Fluxframe yet. They will appear here once the viewer can save mappings.</EmptyState>
    </>
  );
}
