"use client";

import type { ColumnDef } from "@tanstack/react-table";
import { useMemo, useState } from "react";
import { Button } from "@/components/ui/button";
import { DataTable } from "@/components/ui/data-table";
import { FormError } from "@/components/ui/field";
import { EmptyState, ErrorState, Loading, PageHeader } from "@/components/ui/states";
import { useDeleteDetectorProfile, useDetectorProfiles } from "@/lib/client/detector-profiles";
import { can, type Role } from "@/lib/permissions";
import type { DetectorProfileOut, PhotonTransferOut } from "@/lib/schemas/detector-profile";
import { MeasurePanel } from "./measure-panel";
import { draftFromProfile, EMPTY_DRAFT, ProfileForm, typedNumber, type ProfileDraft } from "./profile-form";

const sig = (v: number, digits = 4) => Number(v.toPrecision(digits)).toLocaleString("en", { maximumSignificantDigits: digits });
const unit = (u: string) => <span className="ml-1 font-light text-paper-700">{u}</span>;
const cellNum = (content: React.ReactNode) => <span className="num block text-right">{content}</span>;
const dash = <span className="text-paper-500">—</span>;

function sourceWords(p: DetectorProfileOut) {
  if (p.source === "measured") return <span>Measured{p.sourceDatasetTitle && <span className="block text-xs text-paper-700">from {p.sourceDatasetTitle}</span>}</span>;
  return <span>Typed in{p.fit && <span className="block text-xs text-paper-700">edited after a measurement</span>}</span>;
}

/** The profile form's starting values from a measurement: the fit's numbers and the dataset's bit depth. */
function draftFromMeasurement(result: PhotonTransferOut): ProfileDraft {
  const s = result.suggested;
  return {
    ...EMPTY_DRAFT,
    name: s.name,
    bitDepth: s.bitDepth === null ? "" : String(s.bitDepth),
    offsetDn: typedNumber(s.offsetDn, 6),
    gainValue: typedNumber(s.gainDnPerE, 6),
    readNoiseE: typedNumber(s.readNoiseE, 4),
    saturationCapacityE: typedNumber(Math.round(s.saturationCapacityE), 12),
    source: "measured",
    sourceDatasetId: result.datasetId,
    sourceDatasetTitle: result.datasetTitle,
    fit: result.summary,
  };
}

export function DetectorsPage({ labId, role }: { labId: number; role: Role }) {
  const profiles = useDetectorProfiles(labId);
  const remove = useDeleteDetectorProfile(labId);
  const mayEdit = can(role, "detectors.edit");
  const [draft, setDraft] = useState<ProfileDraft | null>(null);
  const [measuring, setMeasuring] = useState(false);
  const [notice, setNotice] = useState<string | null>(null);

  const columns = useMemo<ColumnDef<DetectorProfileOut, unknown>[]>(() => {
    const destroy = async (p: DetectorProfileOut) => {
      const uses = p.datasetCount ? ` ${p.datasetCount} dataset${p.datasetCount === 1 ? " names" : "s name"} it and will be left without a profile.` : "";
      if (!window.confirm(`Delete the detector profile "${p.name}"?${uses}`)) return;
      setNotice(null);
      await remove.mutateAsync(p.id).then(() => setNotice(`Deleted "${p.name}".`), () => undefined);
    };
    return [
      {
        accessorKey: "name",
        header: "Name",
        cell: ({ row }) =>
          mayEdit ? (
            <button type="button" className="text-left font-medium text-flux-700 underline-offset-2 hover:underline" onClick={() => setDraft(draftFromProfile(row.original))}>
              {row.original.name}
            </button>
          ) : (
            <span className="font-medium">{row.original.name}</span>
          ),
      },
      {
        accessorKey: "bitDepth",
        header: "Bit depth",
        cell: ({ row }) =>
          cellNum(
            <>
              {row.original.bitDepth}
              {unit("bits")}
              <span className="block text-xs text-paper-700">ceiling {row.original.ceiling.toLocaleString("en")} DN</span>
            </>,
          ),
      },
      { accessorKey: "offsetDn", header: "Offset", cell: ({ row }) => cellNum(<>{sig(row.original.offsetDn, 5)}{unit("DN")}</>) },
      {
        accessorKey: "gainDnPerE",
        header: "Gain K",
        cell: ({ row }) =>
          cellNum(
            <>
              {sig(row.original.gainDnPerE)}
              {unit("DN/e⁻")}
              <span className="block text-xs text-paper-700">= {sig(row.original.gainEPerDn)} e⁻/DN</span>
            </>,
          ),
      },
      { accessorKey: "readNoiseE", header: "Read noise", cell: ({ row }) => cellNum(row.original.readNoiseE === null ? dash : <>{sig(row.original.readNoiseE, 3)}{unit("e⁻")}</>) },
      {
        accessorKey: "saturationCapacityE",
        header: "Saturation capacity",
        cell: ({ row }) => cellNum(row.original.saturationCapacityE === null ? dash : <>{Math.round(row.original.saturationCapacityE).toLocaleString("en")}{unit("e⁻")}</>),
      },
      { id: "source", accessorFn: (p) => p.source, header: "Source", cell: ({ row }) => sourceWords(row.original) },
      { accessorKey: "datasetCount", header: "Datasets", cell: ({ row }) => cellNum(row.original.datasetCount) },
      ...(mayEdit
        ? [
            {
              id: "actions",
              header: () => <span className="sr-only">Actions</span>,
              enableSorting: false,
              cell: ({ row }) => (
                <span className="flex justify-end gap-1">
                  <Button variant="ghost" aria-label={`Edit ${row.original.name}`} onClick={() => setDraft(draftFromProfile(row.original))}>
                    Edit
                  </Button>
                  <Button variant="ghost" className="text-fault-700" aria-label={`Delete ${row.original.name}`} onClick={() => destroy(row.original)}>
                    Delete
                  </Button>
                </span>
              ),
            } satisfies ColumnDef<DetectorProfileOut, unknown>,
          ]
        : []),
    ];
  }, [mayEdit, remove]);

  return (
    <>
      <PageHeader
        title="Detectors"
        description="The lab's camera profiles: system gain, offset, read noise and saturation capacity. A dataset that names its profile shows photoelectrons on the bench."
        action={
          <span className="flex gap-2">
            <Button
              variant={mayEdit ? "secondary" : "primary"}
              onClick={() => {
                setDraft(null);
                setMeasuring(true);
              }}
            >
              Measure from a dataset
            </Button>
            {mayEdit && (
              <Button
                onClick={() => {
                  setMeasuring(false);
                  setDraft({ ...EMPTY_DRAFT });
                }}
              >
                New profile
              </Button>
            )}
          </span>
        }
      />
      {notice && (
        <p role="status" className="mb-4 text-sm text-ok-700">
          {notice}
        </p>
      )}
      {draft && (
        <ProfileForm
          labId={labId}
          draft={draft}
          onClose={() => setDraft(null)}
          onSaved={(p) => {
            setDraft(null);
            setMeasuring(false);
            setNotice(`Saved "${p.name}". Name it on a dataset's page to see photoelectrons on the bench.`);
          }}
        />
      )}
      {measuring && (
        <MeasurePanel
          labId={labId}
          mayEdit={mayEdit}
          onClose={() => setMeasuring(false)}
          onSave={(result) => {
            setNotice(null);
            setDraft(draftFromMeasurement(result));
          }}
        />
      )}
      {remove.error && <FormError message={remove.error.message} />}
      {profiles.isPending ? (
        <Loading label="Loading detector profiles…" />
      ) : profiles.isError ? (
        <ErrorState error={profiles.error} retry={() => profiles.refetch()} />
      ) : profiles.data.length === 0 ? (
        <EmptyState title="No detector profiles yet">
          {mayEdit
            ? "Type a camera's numbers from its data sheet with New profile, or measure them from a photon-transfer series (a dark pair, then flat pairs) with Measure from a dataset."
            : "Editors and owners add the lab's cameras here. You can still measure a photon-transfer series with Measure from a dataset."}
        </EmptyState>
      ) : (
        <DataTable data={profiles.data} columns={columns} caption="Detector profiles of this lab" />
      )}
    </>
  );
}
