"use client";

import { useFieldArray, useForm, useWatch } from "react-hook-form";
import { useState } from "react";
import { Button } from "@/components/ui/button";
import { FormError, TextField } from "@/components/ui/field";
import { ApiError } from "@/lib/client/api";
import { useUpdateDataset } from "@/lib/client/datasets";
import { useDetectorProfiles } from "@/lib/client/detector-profiles";
import { updateDatasetBody, type DatasetOut } from "@/lib/schemas/dataset";
import { DIMENSION_ORDERS } from "@/lib/tiff/ome";

// The form edits strings; on submit they become the API body and are checked by the same zod
// schema the route handler uses, so a field shows exactly the server's message.
interface Values {
  title: string;
  experiment: string;
  sample: string;
  treatment: string;
  notes: string;
  tags: string;
  physicalSizeX: string;
  physicalSizeY: string;
  physicalSizeZ: string;
  timeIncrement: string;
  sizeC: string;
  sizeZ: string;
  sizeT: string;
  order: string;
  channels: { name: string; colour: string; emissionNm: string }[];
  /** A profile id, or "" for none. */
  detectorProfileId: string;
}

const text = (v: string | null | undefined) => v ?? "";
const num = (v: number | null | undefined) => (v == null ? "" : String(v));
const toNumber = (v: string) => (v.trim() === "" ? null : Number(v));
const toText = (v: string) => (v.trim() === "" ? null : v.trim());
// Errors about the dimensions as a whole are shown under the channel count.
const fieldFor = (path: string) => (path.startsWith("dimensions") ? "sizeC" : path) as keyof Values;

export function MetadataForm({ dataset }: { dataset: DatasetOut }) {
  const update = useUpdateDataset(dataset.id);
  const [saved, setSaved] = useState(false);
  const form = useForm<Values>({
    defaultValues: {
      title: dataset.title,
      experiment: text(dataset.experiment),
      sample: text(dataset.sample),
      treatment: text(dataset.treatment),
      notes: text(dataset.notes),
      tags: dataset.tags.join(", "),
      physicalSizeX: num(dataset.physicalSizeX),
      physicalSizeY: num(dataset.physicalSizeY),
      physicalSizeZ: num(dataset.physicalSizeZ),
      timeIncrement: num(dataset.timeIncrement),
      sizeC: num(dataset.sizeC),
      sizeZ: num(dataset.sizeZ),
      sizeT: num(dataset.sizeT),
      order: dataset.dimensionOrder ?? "XYCZT",
      channels: (dataset.channels ?? []).map((c) => ({ name: c.name, colour: c.colour, emissionNm: num(c.emissionNm) })),
      detectorProfileId: num(dataset.detectorProfileId),
    },
  });
  const profiles = useDetectorProfiles(dataset.labId);
  // Controlled, so the choice survives the options arriving after the first render.
  const detectorValue = useWatch({ control: form.control, name: "detectorProfileId" });
  const channels = useFieldArray({ control: form.control, name: "channels" });
  const errors = form.formState.errors;
  // A file without OME-XML (or one that failed before its dimensions were settled) can be re-described.
  const editableDims = dataset.dimensionsFrom !== "ome-xml" && dataset.status !== "queued" && dataset.status !== "ingesting";

  const onSubmit = form.handleSubmit(async (v) => {
    setSaved(false);
    const body = {
      title: v.title.trim(),
      experiment: toText(v.experiment),
      sample: toText(v.sample),
      treatment: toText(v.treatment),
      notes: toText(v.notes),
      tags: v.tags.split(",").map((t) => t.trim()).filter(Boolean),
      physicalSizeX: toNumber(v.physicalSizeX),
      physicalSizeY: toNumber(v.physicalSizeY),
      physicalSizeZ: toNumber(v.physicalSizeZ),
      timeIncrement: toNumber(v.timeIncrement),
      detectorProfileId: toNumber(v.detectorProfileId),
      ...(v.channels.length ? { channels: v.channels.map((c) => ({ name: c.name, colour: c.colour, emissionNm: toNumber(c.emissionNm) })) } : {}),
      ...(editableDims ? { dimensions: { sizeC: Number(v.sizeC), sizeZ: Number(v.sizeZ), sizeT: Number(v.sizeT), order: v.order } } : {}),
    };
    const parsed = updateDatasetBody.safeParse(body);
    if (!parsed.success) {
      for (const issue of parsed.error.issues) form.setError(fieldFor(issue.path.join(".")), { message: issue.message });
      return;
    }
    try {
      await update.mutateAsync(parsed.data);
      setSaved(true);
    } catch (error) {
      if (error instanceof ApiError) for (const [field, message] of Object.entries(error.fields)) form.setError(fieldFor(field), { message });
    }
  });

  return (
    <form onSubmit={onSubmit} noValidate aria-label="Dataset metadata" className="space-y-5 rounded-md border border-paper-200 bg-white p-4">
      <h2 className="text-sm font-semibold">Metadata</h2>
      <div className="grid gap-4 sm:grid-cols-2">
        <TextField label="Title" error={errors.title?.message} {...form.register("title")} />
        <TextField label="Experiment" error={errors.experiment?.message} {...form.register("experiment")} />
        <TextField label="Sample" error={errors.sample?.message} {...form.register("sample")} />
        <TextField label="Treatment" error={errors.treatment?.message} {...form.register("treatment")} />
        <TextField label="Tags" hint="Separated by commas." error={errors.tags?.message} {...form.register("tags")} />
      </div>
      <label className="block space-y-1 text-sm font-medium">
        Notes
        <textarea rows={3} className="block w-full rounded border border-paper-300 px-2.5 py-1.5 text-sm font-normal" {...form.register("notes")} />
      </label>
      <fieldset className="grid gap-4 sm:grid-cols-4">
        <legend className="mb-2 text-sm font-semibold">Scale</legend>
        <TextField label="Pixel width (µm)" inputMode="decimal" error={errors.physicalSizeX?.message} {...form.register("physicalSizeX")} />
        <TextField label="Pixel height (µm)" inputMode="decimal" error={errors.physicalSizeY?.message} {...form.register("physicalSizeY")} />
        <TextField label="Z step (µm)" inputMode="decimal" error={errors.physicalSizeZ?.message} {...form.register("physicalSizeZ")} />
        <TextField label="Interval (s)" inputMode="decimal" error={errors.timeIncrement?.message} {...form.register("timeIncrement")} />
      </fieldset>
      <fieldset className="space-y-2">
        <legend className="mb-2 text-sm font-semibold">Detector</legend>
        <label className="block max-w-md space-y-1 text-sm font-medium">
          Detector profile
          <select
            className="block w-full rounded border border-paper-300 bg-white px-2 py-1.5 text-sm"
            value={detectorValue}
            onChange={(e) => form.setValue("detectorProfileId", e.target.value, { shouldDirty: true })}
          >
            <option value="">None (raw counts only)</option>
            {/* The dataset's own profile stays listed while the list loads or if it fails. */}
            {dataset.detector && !profiles.data?.some((p) => p.id === dataset.detector?.id) && <option value={dataset.detector.id}>{dataset.detector.name}</option>}
            {(profiles.data ?? []).map((p) => (
              <option key={p.id} value={p.id}>
                {p.name} — K {Number(p.gainDnPerE.toPrecision(4))} DN/e⁻, offset {Number(p.offsetDn.toPrecision(5))} DN
              </option>
            ))}
          </select>
        </label>
        <p className="text-xs text-paper-700">
          {profiles.isError
            ? `The lab's detector profiles could not be loaded: ${profiles.error.message}`
            : profiles.data?.length === 0
              ? "This lab has no detector profiles yet; add one on the Detectors page."
              : "With a profile, the bench shows photoelectrons, (DN − offset) / K, next to the raw value."}
        </p>
        {errors.detectorProfileId?.message && (
          <p role="alert" className="text-xs font-medium text-fault-700">
            {errors.detectorProfileId.message}
          </p>
        )}
      </fieldset>
      {editableDims && (
        <fieldset className="grid gap-4 sm:grid-cols-4">
          <legend className="mb-2 text-sm font-semibold">Dimensions (changing them reads the planes again)</legend>
          <TextField label="Channels" inputMode="numeric" error={errors.sizeC?.message} {...form.register("sizeC")} />
          <TextField label="Z-slices" inputMode="numeric" {...form.register("sizeZ")} />
          <TextField label="Time points" inputMode="numeric" {...form.register("sizeT")} />
          <label className="space-y-1 text-sm font-medium">
            Order
            <select className="block w-full rounded border border-paper-300 bg-white px-2 py-1.5 text-sm" {...form.register("order")}>
              {DIMENSION_ORDERS.map((o) => (
                <option key={o}>{o}</option>
              ))}
            </select>
          </label>
        </fieldset>
      )}
      {channels.fields.length > 0 && (
        <fieldset className="space-y-2">
          <legend className="mb-2 text-sm font-semibold">Channels</legend>
          {channels.fields.map((field, i) => (
            <div key={field.id} className="grid items-end gap-3 sm:grid-cols-[1fr_8rem_8rem]">
              <TextField label={`Channel ${i + 1} name`} error={errors.channels?.[i]?.name?.message} {...form.register(`channels.${i}.name`)} />
              <TextField label="Colour" type="color" className="h-9 w-full rounded border border-paper-300" error={errors.channels?.[i]?.colour?.message} {...form.register(`channels.${i}.colour`)} />
              <TextField label="Emission (nm)" inputMode="numeric" error={errors.channels?.[i]?.emissionNm?.message} {...form.register(`channels.${i}.emissionNm`)} />
            </div>
          ))}
        </fieldset>
      )}
      <div className="flex items-center gap-3">
        <Button type="submit" busy={update.isPending}>
          Save metadata
        </Button>
        {saved && (
          <span role="status" className="text-sm text-ok-700">
            Saved.
          </span>
        )}
      </div>
      {update.error && !(update.error instanceof ApiError && Object.keys(update.error.fields).length) && <FormError message={update.error.message} />}
    </form>
  );
}
