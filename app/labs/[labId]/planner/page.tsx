import { EmptyState, PageHeader } from "@/components/ui/states";

export const metadata = { title: "Planner" };

export default function Page() {
  return (
    <>
      <PageHeader title="Planner" description="Estimate how much storage an acquisition will need before you start it." />
      <EmptyState title="The planner is not available yet">The storage planner is not part of this version of Fluxframe yet.</EmptyState>
    </>
  );
}
