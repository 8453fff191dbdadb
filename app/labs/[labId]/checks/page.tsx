import { EmptyState, PageHeader } from "@/components/ui/states";

export const metadata = { title: "Checks" };

export default function Page() {
  return (
    <>
      <PageHeader title="Checks" description="Every dataset's acquisition check: saturation, offset, range use and sampling." />
      <EmptyState title="No checks yet">Checks run on uploaded datasets, which this version of Fluxframe cannot take yet.</EmptyState>
    </>
  );
}
