"use client";

import { useSearchParams } from "next/navigation";
import { Suspense, useMemo, useState } from "react";
import { Button } from "@/components/ui/button";
import { Loading, PageHeader } from "@/components/ui/states";
import { planStorage } from "@/lib/imaging/planner";
import { planInputOf, plannerDefaults, plannerFieldsFrom, plannerKeys, plannerQuery, type PlannerFields, type PlannerKey } from "@/lib/schemas/planner";
import { PlannerForm } from "./planner-form";
import { CompressionNote, FieldOfViewResult, StorageTable } from "./planner-results";

/** The fields as a query string, in a fixed order so equal plans give equal links. */
function queryOf(fields: PlannerFields): string {
  const params = new URLSearchParams();
  for (const key of plannerKeys) params.set(key, fields[key] as string);
  return params.toString();
}

function Planner({ labId }: { labId: number }) {
  const search = useSearchParams();
  // The URL is read once: afterwards the form is the truth and the URL follows it.
  const [fields, setFields] = useState<PlannerFields>(() => plannerFieldsFrom(search));
  const [copied, setCopied] = useState<"yes" | "failed" | null>(null);

  const update = (next: PlannerFields) => {
    setFields(next);
    setCopied(null);
    // Native replaceState: Next keeps useSearchParams in step without a navigation or a scroll jump.
    window.history.replaceState(window.history.state, "", `${window.location.pathname}?${queryOf(next)}`);
  };
  const change = (key: PlannerKey, value: string) => update({ ...fields, [key]: value });

  const parsed = useMemo(() => plannerQuery.safeParse(fields), [fields]);
  const errors = useMemo(() => {
    const out: Partial<Record<PlannerKey, string>> = {};
    if (!parsed.success) for (const issue of parsed.error.issues) out[issue.path[0] as PlannerKey] ??= issue.message;
    return out;
  }, [parsed]);
  const plan = parsed.success ? planStorage(planInputOf(parsed.data)) : null;

  const copyLink = async () => {
    const url = `${window.location.origin}${window.location.pathname}?${queryOf(fields)}`;
    try {
      await navigator.clipboard.writeText(url);
      setCopied("yes");
    } catch {
      setCopied("failed");
    }
  };

  return (
    <>
      <PageHeader
        title="Planner"
        description="Estimate how much storage an acquisition will need before you start it. Every input is kept in the page address, so a link to this page shows the same plan."
        action={
          <div className="flex flex-wrap items-center gap-2">
            <Button variant="secondary" onClick={() => update({ ...plannerDefaults })}>
              Reset
            </Button>
            <Button onClick={copyLink}>Copy link</Button>
          </div>
        }
      />
      <p role="status" className="-mt-4 mb-4 min-h-5 text-sm text-paper-700">
        {copied === "yes" ? "Link copied." : copied === "failed" ? "Copying was not allowed; copy the address from the address bar." : ""}
      </p>
      <div className="grid gap-6 lg:grid-cols-[22rem_1fr]">
        <PlannerForm fields={fields} errors={errors} onChange={change} />
        <div className="space-y-6">
          {plan && parsed.success ? (
            <>
              <StorageTable plan={plan} query={parsed.data} />
              <CompressionNote labId={labId} totalBytes={plan.totalBytes} />
              <FieldOfViewResult query={parsed.data} />
            </>
          ) : (
            <p role="alert" className="rounded-md border border-caution-700/30 bg-caution-100 px-4 py-3 text-sm text-caution-700">
              Correct the marked {Object.keys(errors).length === 1 ? "field" : "fields"} to see the estimate.
            </p>
          )}
        </div>
      </div>
    </>
  );
}

export function PlannerPage({ labId }: { labId: number }) {
  // useSearchParams needs a Suspense boundary when a page is rendered ahead of the request.
  return (
    <Suspense fallback={<Loading label="Loading the planner…" />}>
      <Planner labId={labId} />
    </Suspense>
  );
}
