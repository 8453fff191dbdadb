"use client";

import { zodResolver } from "@hookform/resolvers/zod";
import Link from "next/link";
import { useRouter } from "next/navigation";
import { useForm } from "react-hook-form";
import type { z } from "zod";
import { Button } from "@/components/ui/button";
import { FormError, TextField } from "@/components/ui/field";
import { EmptyState, ErrorState, Loading, PageHeader } from "@/components/ui/states";
import { ApiError } from "@/lib/client/api";
import { useCreateLab, useLabs } from "@/lib/client/hooks";
import { roleLabels } from "@/lib/permissions";
import { createLabBody } from "@/lib/schemas/lab";

function CreateLabForm() {
  const router = useRouter();
  const create = useCreateLab();
  const form = useForm<z.input<typeof createLabBody>, unknown, z.output<typeof createLabBody>>({
    resolver: zodResolver(createLabBody),
    defaultValues: { name: "" },
  });
  const onSubmit = form.handleSubmit(async ({ name }) => {
    try {
      const lab = await create.mutateAsync(name);
      router.push(`/labs/${lab.id}/members`);
    } catch (error) {
      if (error instanceof ApiError && error.fields.name) form.setError("name", { message: error.fields.name });
    }
  });
  return (
    <form onSubmit={onSubmit} noValidate className="flex flex-wrap items-end gap-3 rounded-md border border-paper-200 bg-white p-4">
      <div className="min-w-64 flex-1">
        <TextField label="New lab name" placeholder="e.g. Live-cell imaging group" error={form.formState.errors.name?.message} {...form.register("name")} />
      </div>
      <Button type="submit" busy={create.isPending}>
        Create lab
      </Button>
      {create.error && !(create.error instanceof ApiError && create.error.fields.name) && (
        <div className="w-full">
          <FormError message={create.error.message} />
        </div>
      )}
    </form>
  );
}

export function LabsOverview() {
  const labs = useLabs();
  return (
    <>
      <PageHeader title="Your labs" description="A lab shares datasets, presets and detector profiles among its members. Pick one, or start a new lab." />
      <div className="space-y-6">
        {labs.isPending ? (
          <Loading label="Loading your labs…" />
        ) : labs.isError ? (
          <ErrorState error={labs.error} retry={() => labs.refetch()} />
        ) : labs.data.length === 0 ? (
          <EmptyState title="You are not in a lab yet">
            Create a lab below, or open the invitation link a lab owner sent you.
          </EmptyState>
        ) : (
          <ul className="divide-y divide-paper-200 rounded-md border border-paper-200 bg-white">
            {labs.data.map((lab) => (
              <li key={lab.id}>
                <Link href={`/labs/${lab.id}/datasets`} className="flex items-center justify-between px-4 py-3 hover:bg-paper-100">
                  <span className="font-medium">{lab.name}</span>
                  <span className="text-sm text-paper-700">
                    {roleLabels[lab.role]} · <span className="num">{lab.memberCount}</span> member{lab.memberCount === 1 ? "" : "s"}
                  </span>
                </Link>
              </li>
            ))}
          </ul>
        )}
        <CreateLabForm />
      </div>
    </>
  );
}
