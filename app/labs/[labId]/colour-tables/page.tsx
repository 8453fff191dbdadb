import { EmptyState, PageHeader } from "@/components/ui/states";

export const metadata = { title: "Colour tables" };

export default function Page() {
  return (
    <>
      <PageHeader title="Colour tables" description="Colour ramps for mapping counts to display, including colour-blind-safe ones." />
      <EmptyState title="No custom colour tables yet">The colour-table editor is not part of this version of Fluxframe yet.</EmptyState>
    </>
  );
}
