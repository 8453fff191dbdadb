"use client";

import { useEffect, useId, useState } from "react";
import { useForm, useWatch } from "react-hook-form";
import { Button } from "@/components/ui/button";
import { FormError, TextField } from "@/components/ui/field";
import { ApiError } from "@/lib/client/api";
import { useCreateDetectorProfile, useUpdateDetectorProfile } from "@/lib/client/detector-profiles";
import { gainFromDnPerE, type GainUnit } from "@/lib/imaging/photon-transfer";
import {
  createDetectorProfileBody,
  gainUnitLabels,
  updateDetectorProfileBody,
  type DetectorProfileOut,
  type PhotonTransferSummary,
} from "@/lib/schemas/detector-profile";

/** What the form edits: a new profile (typed or from a measurement) or a saved one. Numbers are kept as typed. */
export interface ProfileDraft {
  id: number | null;
  version: number | null;
  name: string;
  bitDepth: string;
  offsetDn: string;
  gainValue: string;
  gainUnit: GainUnit;
  readNoiseE: string;
  saturationCapacityE: string;
  notes: string;
  source: "manual" | "measured";
  sourceDatasetId: number | null;
  sourceDatasetTitle: string | null;
  fit: PhotonTransferSummary | null;
}

type Values = Pick<ProfileDraft, "name" | "bitDepth" | "offsetDn" | "gainValue" | "gainUnit" | "readNoiseE" | "saturationCapacityE" | "notes">;

/** Enough digits to give back the stored number when it is sent again unchanged (read as the same to 1e-12). */
export const typedNumber = (v: number | null | undefined, digits = 12) => (v == null ? "" : String(Number(v.toPrecision(digits))));

export const EMPTY_DRAFT: ProfileDraft = {
  id: null,
  version: null,
  name: "",
  bitDepth: "",
  offsetDn: "",
  gainValue: "",
  gainUnit: "dn_per_e",
  readNoiseE: "",
  saturationCapacityE: "",
  notes: "",
  source: "manual",
  sourceDatasetId: null,
  sourceDatasetTitle: null,
  fit: null,
};

export function draftFromProfile(p: DetectorProfileOut): ProfileDraft {
  return {
    id: p.id,
    version: p.version,
    name: p.name,
    bitDepth: String(p.bitDepth),
    offsetDn: typedNumber(p.offsetDn),
    gainValue: typedNumber(p.gainDnPerE),
    gainUnit: "dn_per_e",
    readNoiseE: typedNumber(p.readNoiseE),
    saturationCapacityE: typedNumber(p.saturationCapacityE),
    notes: p.notes ?? "",
    source: p.source,
    sourceDatasetId: p.sourceDatasetId,
    sourceDatasetTitle: p.sourceDatasetTitle,
    fit: p.fit,
  };
}

const toNumber = (v: string) => (v.trim() === "" ? null : Number(v.trim().replace(",", ".")));
// An empty required number becomes NaN so the schema answers "must be a number" rather than a default.
const required = (v: string) => toNumber(v) ?? Number.NaN;
// Errors from the schema and the server are keyed by the body's paths; the gain's are the form's two gain fields.
const fieldFor = (path: string): keyof Values | null => {
  if (path === "gain" || path === "gain.value") return "gainValue";
  if (path === "gain.unit") return "gainUnit";
  return ["name", "bitDepth", "offsetDn", "readNoiseE", "saturationCapacityE", "notes"].includes(path) ? (path as keyof Values) : null;
};

/** "= 0.25 DN/e⁻" — the gain as it will be stored, or as its inverse, so the unit chosen is never in doubt. */
function conversionLine(value: string, unit: GainUnit): string | null {
  const v = toNumber(value);
  if (v === null || !Number.isFinite(v) || v <= 0) return null;
  const k = unit === "dn_per_e" ? v : 1 / v;
  const digits = (n: number) => Number(n.toPrecision(5)).toLocaleString("en", { maximumSignificantDigits: 5 });
  return `K = ${digits(k)} DN/e⁻ (stored) · ${digits(gainFromDnPerE(k, "e_per_dn"))} e⁻/DN`;
}

interface Props {
  labId: number;
  draft: ProfileDraft;
  onClose: () => void;
  onSaved: (profile: DetectorProfileOut) => void;
}

export function ProfileForm({ labId, draft, onClose, onSaved }: Props) {
  const create = useCreateDetectorProfile(labId);
  const update = useUpdateDetectorProfile(labId);
  const headingId = useId();
  const unitName = useId();
  const form = useForm<Values>({ defaultValues: draft });
  const errors = form.formState.errors;
  const gainValue = useWatch({ control: form.control, name: "gainValue" });
  const gainUnit = useWatch({ control: form.control, name: "gainUnit" });
  const mutation = draft.id === null ? create : update;
  // Messages about no field of this form (e.g. the measured dataset), shown above the buttons.
  const [problem, setProblem] = useState<string | null>(null);

  useEffect(() => {
    form.reset(draft);
    form.setFocus("name");
  }, [draft, form]);

  const showErrors = (issues: { path: string; message: string }[]) => {
    const unplaced: string[] = [];
    const placed = new Set<string>();
    for (const { path, message } of issues) {
      const field = fieldFor(path);
      // The first message of a field is the one that explains it (a range check before a cross-field one).
      if (field && !placed.has(field)) form.setError(field, { message });
      if (field) placed.add(field);
      else unplaced.push(message);
    }
    setProblem(unplaced.length ? unplaced.join(" ") : null);
  };

  const onSubmit = form.handleSubmit(async (v) => {
    mutation.reset();
    setProblem(null);
    const gain = { value: required(v.gainValue), unit: v.gainUnit };
    let body: Record<string, unknown>;
    if (draft.id === null) {
      body = {
        name: v.name,
        bitDepth: required(v.bitDepth),
        offsetDn: required(v.offsetDn),
        gain,
        readNoiseE: toNumber(v.readNoiseE),
        saturationCapacityE: toNumber(v.saturationCapacityE),
        notes: v.notes.trim() || null,
        ...(draft.source === "measured" ? { source: "measured", sourceDatasetId: draft.sourceDatasetId, fit: draft.fit } : {}),
      };
    } else {
      // Only what was changed is sent: an untouched measured number keeps the profile "measured".
      body = { version: draft.version };
      if (v.name !== draft.name) body.name = v.name;
      if (v.bitDepth !== draft.bitDepth) body.bitDepth = required(v.bitDepth);
      if (v.offsetDn !== draft.offsetDn) body.offsetDn = required(v.offsetDn);
      if (v.gainValue !== draft.gainValue || v.gainUnit !== draft.gainUnit) body.gain = gain;
      if (v.readNoiseE !== draft.readNoiseE) body.readNoiseE = toNumber(v.readNoiseE);
      if (v.saturationCapacityE !== draft.saturationCapacityE) body.saturationCapacityE = toNumber(v.saturationCapacityE);
      if (v.notes !== draft.notes) body.notes = v.notes.trim() || null;
    }
    // The route's own schemas check the body first, so a field shows exactly the server's message.
    const issues = (e: { issues: { path: PropertyKey[]; message: string }[] }) => showErrors(e.issues.map((i) => ({ path: i.path.join("."), message: i.message })));
    try {
      if (draft.id === null) {
        const parsed = createDetectorProfileBody.safeParse(body);
        if (!parsed.success) return void issues(parsed.error);
        onSaved(await create.mutateAsync(parsed.data));
      } else {
        const parsed = updateDetectorProfileBody.safeParse(body);
        if (!parsed.success) return void issues(parsed.error);
        onSaved(await update.mutateAsync({ id: draft.id, ...parsed.data }));
      }
    } catch (error) {
      if (error instanceof ApiError) showErrors(Object.entries(error.fields).map(([path, message]) => ({ path, message })));
    }
  });

  const apiError = mutation.error;
  const fieldsShown = apiError instanceof ApiError && Object.keys(apiError.fields).some((f) => fieldFor(f));
  const title = draft.id === null ? (draft.source === "measured" ? "Save the measurement as a profile" : "New detector profile") : `Edit: ${draft.name}`;
  const conversion = conversionLine(gainValue, gainUnit);

  return (
    <section aria-labelledby={headingId} className="mb-8 rounded-md border border-paper-300 bg-white p-5">
      <form onSubmit={onSubmit} noValidate aria-labelledby={headingId} className="space-y-5">
        <div className="flex flex-wrap items-start justify-between gap-3">
          <h2 id={headingId} className="text-lg font-semibold text-paper-900">
            {title}
          </h2>
          <Button type="button" variant="ghost" onClick={onClose}>
            Close
          </Button>
        </div>
        {draft.sourceDatasetId !== null && draft.fit && (
          <p className="rounded bg-paper-100 px-3 py-2 text-sm text-paper-700">
            {draft.source === "measured" ? "Measured" : "First measured"} by photon transfer (EMVA 1288) from{" "}
            <span className="font-medium text-paper-900">{draft.sourceDatasetTitle ?? `dataset ${draft.sourceDatasetId}`}</span>, {draft.fit.fitLevels} levels fitted.
            {draft.source === "measured" && " Changing the offset, gain, read noise or saturation capacity makes it a typed-in profile; the fit is kept for reference."}
          </p>
        )}
        <div className="grid gap-4 sm:grid-cols-3">
          <div className="sm:col-span-2">
            <TextField label="Name" error={errors.name?.message} {...form.register("name")} />
          </div>
          <TextField label="Bit depth (bits)" inputMode="numeric" hint="The ceiling is 2^bits − 1, e.g. 12 bits → 4095 DN." error={errors.bitDepth?.message} {...form.register("bitDepth")} />
          <TextField label="Offset (DN)" inputMode="decimal" hint="The dark level the camera adds." error={errors.offsetDn?.message} {...form.register("offsetDn")} />
          <TextField label="Read noise (e⁻, optional)" inputMode="decimal" error={errors.readNoiseE?.message} {...form.register("readNoiseE")} />
          <TextField label="Saturation capacity (e⁻, optional)" inputMode="decimal" error={errors.saturationCapacityE?.message} {...form.register("saturationCapacityE")} />
        </div>
        <fieldset className="space-y-2">
          <legend className="text-sm font-semibold text-paper-900">System gain</legend>
          <div className="flex flex-wrap items-start gap-4">
            <div className="w-48">
              <TextField label={`Gain (${gainUnitLabels[gainUnit]})`} inputMode="decimal" error={errors.gainValue?.message} {...form.register("gainValue")} />
            </div>
            <div role="radiogroup" aria-label="Unit of the gain as typed" className="space-y-1 pt-6 text-sm">
              <label className="flex items-center gap-2">
                <input type="radio" name={unitName} value="dn_per_e" className="accent-flux-600" checked={gainUnit === "dn_per_e"} onChange={() => form.setValue("gainUnit", "dn_per_e", { shouldDirty: true })} />
                DN/e⁻ — K as EMVA 1288 defines it
              </label>
              <label className="flex items-center gap-2">
                <input type="radio" name={unitName} value="e_per_dn" className="accent-flux-600" checked={gainUnit === "e_per_dn"} onChange={() => form.setValue("gainUnit", "e_per_dn", { shouldDirty: true })} />
                e⁻/DN — the inverse, as many camera data sheets quote it
              </label>
            </div>
          </div>
          <p className="num text-sm text-paper-700" aria-live="polite">
            {conversion ?? "Type the gain in the unit chosen; the other unit is shown here."}
          </p>
          {errors.gainUnit?.message && (
            <p role="alert" className="text-xs font-medium text-fault-700">
              {errors.gainUnit.message}
            </p>
          )}
        </fieldset>
        <label className="block space-y-1 text-sm font-medium">
          Notes
          <textarea rows={2} className="block w-full rounded border border-paper-300 px-2.5 py-1.5 text-sm font-normal" {...form.register("notes")} />
        </label>
        <div className="flex items-center gap-3">
          <Button type="submit" busy={mutation.isPending}>
            {draft.id === null ? "Save profile" : "Save changes"}
          </Button>
          <Button type="button" variant="secondary" onClick={onClose}>
            Cancel
          </Button>
        </div>
        <FormError message={problem ?? (apiError && !fieldsShown ? apiError.message : null)} />
      </form>
    </section>
  );
}
