import { EmptyState, PageHeader } from "@/components/ui/states";

export const metadata = { title: "Datasets" };

export default function Page() {
  return (
    <>
      <PageHeader title="Datasets" description="Raw stacks uploaded by the lab, with their size, bit depth and check verdict." />
      <EmptyState title="No datasets yet">Uploading and browsing stacks is not part of this version of Fluxframe yet. When it arrives, this page lists every stack the lab has uploaded.</EmptyState>
    </>
  );
}
