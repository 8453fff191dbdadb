"use client";

import { zodResolver } from "@hookform/resolvers/zod";
import { useEffect, useId } from "react";
import { useFieldArray, useForm, useWatch, type Control, type FieldErrors, type UseFormRegister } from "react-hook-form";
import { Button } from "@/components/ui/button";
import { FormError, SelectField, TextField } from "@/components/ui/field";
import { ApiError } from "@/lib/client/api";
import { useCreatePreset } from "@/lib/client/presets";
import { builtInTables, safeChannelColours } from "@/lib/imaging/colour-tables";
import type { CreatePresetBody, PresetOut } from "@/lib/schemas/preset";
import {
  DEFAULT_COUNTS,
  DEFAULT_PERCENTILES,
  FORM_MAX_CHANNELS,
  formFieldPath,
  presetForm,
  type PresetFormChannel,
  type PresetFormValues,
} from "@/lib/schemas/preset-form";
import { PresetPanel } from "./panel";

// Single-hue ramps are what "no table" already gives for any colour, so only grey and the
// perceptual tables are offered.
const tableChoices = builtInTables.filter((t) => t.kind !== "single-hue");
// The colour-blind-safe set for four channels, lower-case because a colour input reports lower case.
const rowColours = safeChannelColours(FORM_MAX_CHANNELS).map((c) => c.toLowerCase());

const newRow = (i: number): PresetFormChannel => ({
  matchName: "",
  index: String(i),
  visible: true,
  colour: rowColours[i % rowColours.length],
  tableId: "",
  gamma: "1",
  mode: "percentiles",
  ...DEFAULT_COUNTS,
  ...DEFAULT_PERCENTILES,
});

function ChannelRow({
  i,
  control,
  register,
  errors,
  onRemove,
}: {
  i: number;
  control: Control<PresetFormValues, unknown, CreatePresetBody>;
  register: UseFormRegister<PresetFormValues>;
  errors: FieldErrors<PresetFormValues>["channels"];
  onRemove?: () => void;
}) {
  const legendId = useId();
  const mode = useWatch({ control, name: `channels.${i}.mode` });
  const gamma = useWatch({ control, name: `channels.${i}.gamma` });
  const e = errors?.[i];
  const gammaValue = Number(gamma);
  const nonLinear = (gamma ?? "").trim() !== "" && Number.isFinite(gammaValue) && gammaValue !== 1;
  return (
    <fieldset aria-labelledby={legendId} className="rounded border border-paper-200 bg-paper-50 p-3">
      <div className="flex items-center justify-between">
        <span id={legendId} className="text-sm font-semibold text-paper-900">
          Channel {i + 1}
        </span>
        {onRemove && (
          <Button type="button" variant="ghost" onClick={onRemove} aria-label={`Remove channel ${i + 1}`}>
            Remove
          </Button>
        )}
      </div>
      <div className="mt-2 grid grid-cols-2 gap-3 sm:grid-cols-4 lg:grid-cols-8">
        <div className="col-span-2">
          <TextField label="Match name" hint="Optional; matched before the index." maxLength={120} error={e?.matchName?.message} {...register(`channels.${i}.matchName`)} />
        </div>
        <TextField label="Index" inputMode="numeric" hint="0 = first channel" error={e?.index?.message} {...register(`channels.${i}.index`)} />
        <div className="space-y-1">
          <span className="block text-sm font-medium text-paper-900">Shown</span>
          <label className="flex items-center gap-2 py-1.5 text-sm text-paper-900">
            <input type="checkbox" className="h-4 w-4 accent-flux-700" {...register(`channels.${i}.visible`)} />
            Visible
          </label>
        </div>
        <TextField
          label="Colour"
          type="color"
          className="block h-[34px] w-16 cursor-pointer rounded border border-paper-300 bg-white p-0.5 aria-[invalid=true]:border-fault-700"
          error={e?.colour?.message}
          {...register(`channels.${i}.colour`)}
        />
        <div className="col-span-2 sm:col-span-3 lg:col-span-2">
          <SelectField label="Colour table" error={e?.tableId?.message} {...register(`channels.${i}.tableId`)}>
            <option value="">None: black to the colour</option>
            {tableChoices.map((t) => (
              <option key={t.id} value={t.id}>
                {t.name}
              </option>
            ))}
          </SelectField>
        </div>
        <TextField
          label="Gamma"
          inputMode="decimal"
          error={e?.gamma?.message}
          hint={nonLinear ? <span className="font-medium text-caution-700">Non-linear display mapping</span> : "1 = linear"}
          {...register(`channels.${i}.gamma`)}
        />
        <div className="col-span-2">
          <SelectField label="Range" error={e?.mode?.message} {...register(`channels.${i}.mode`)}>
            <option value="percentiles">Percentiles of the plane (Fit)</option>
            <option value="counts">Fixed counts</option>
          </SelectField>
        </div>
        {mode === "counts" ? (
          <>
            <TextField key="black" label="Black point" inputMode="decimal" hint="counts" error={e?.black?.message} {...register(`channels.${i}.black`)} />
            <TextField key="white" label="White point" inputMode="decimal" hint="counts" error={e?.white?.message} {...register(`channels.${i}.white`)} />
          </>
        ) : (
          <>
            <TextField key="low" label="Low percentile" inputMode="decimal" hint="%" error={e?.low?.message} {...register(`channels.${i}.low`)} />
            <TextField key="high" label="High percentile" inputMode="decimal" hint="%" error={e?.high?.message} {...register(`channels.${i}.high`)} />
          </>
        )}
      </div>
    </fieldset>
  );
}

/**
 * Makes a preset from scratch. The form is checked with the route's own schema (lib/schemas/preset-form.ts),
 * so what passes here is what the server stores; a taken name comes back as 409 and lands on the name field.
 */
export function NewPresetPanel({
  labId,
  mayShare,
  onDone,
  onCancel,
}: {
  labId: number;
  /** Whether the person may add lab presets (presets.edit). */
  mayShare: boolean;
  onDone: (preset: PresetOut) => void;
  onCancel: () => void;
}) {
  const create = useCreatePreset(labId);
  const nameId = useId();
  const addId = useId();
  const form = useForm<PresetFormValues, unknown, CreatePresetBody>({
    resolver: zodResolver(presetForm),
    defaultValues: { name: "", scope: "private", blend: "add", channels: [newRow(0)] },
  });
  const channels = useFieldArray({ control: form.control, name: "channels" });
  const errors = form.formState.errors;

  useEffect(() => document.getElementById(nameId)?.focus(), [nameId]);

  const onSubmit = form.handleSubmit(async (body) => {
    try {
      onDone(await create.mutateAsync(body));
    } catch (error) {
      if (!(error instanceof ApiError)) return;
      // Field messages from the server (a taken name, or a rule the form somehow missed) go onto their fields.
      const fields = Object.entries(error.fields);
      fields.forEach(([key, message], n) => form.setError(formFieldPath(key.split(".")) as "name", { message }, { shouldFocus: n === 0 }));
      // Create was disabled while busy, which drops the focus; with no field to correct, keep it in the form.
      if (!fields.length) requestAnimationFrame(() => document.getElementById(nameId)?.focus());
    }
  });

  const serverError = create.error instanceof ApiError && Object.keys(create.error.fields).length ? null : create.error?.message;

  return (
    <PresetPanel title="New preset" description={<>Channels are matched to a dataset&apos;s channels by name when given, otherwise by index. Percentile ranges are worked out from each plane when the preset is applied.</>} onCancel={onCancel}>
      <form onSubmit={onSubmit} noValidate className="mt-3 space-y-3">
        <div className="flex flex-wrap items-start gap-3">
          <div className="w-80">
            <TextField id={nameId} label="Name" maxLength={120} error={errors.name?.message} {...form.register("name")} />
          </div>
          <div className="w-56">
            <SelectField label="Shared with" error={errors.scope?.message} {...form.register("scope")}>
              <option value="private">Only me (my presets)</option>
              {mayShare && <option value="lab">The lab (every member)</option>}
            </SelectField>
          </div>
          <div className="w-48">
            <SelectField label="Blend" error={errors.blend?.message} {...form.register("blend")}>
              <option value="add">Add</option>
              <option value="max">Max</option>
            </SelectField>
          </div>
        </div>
        {channels.fields.map((field, i) => (
          <ChannelRow
            key={field.id}
            i={i}
            control={form.control}
            register={form.register}
            errors={errors.channels}
            onRemove={
              channels.fields.length > 1
                ? () => {
                    channels.remove(i);
                    // The Remove button went with its row; keep the keyboard in the form.
                    requestAnimationFrame(() => document.getElementById(addId)?.focus());
                  }
                : undefined
            }
          />
        ))}
        <FormError message={errors.channels?.root?.message ?? errors.channels?.message} />
        <div className="flex flex-wrap items-center gap-2">
          <Button
            id={addId}
            type="button"
            variant="secondary"
            disabled={channels.fields.length >= FORM_MAX_CHANNELS}
            onClick={() => channels.append(newRow(channels.fields.length), { focusName: `channels.${channels.fields.length}.matchName` })}
          >
            Add channel
          </Button>
          <span className="text-xs text-paper-700">
            <span className="num">{channels.fields.length}</span> of <span className="num">{FORM_MAX_CHANNELS}</span> channels
          </span>
          <span className="flex-1" />
          <Button type="submit" busy={create.isPending}>
            Create preset
          </Button>
          <Button type="button" variant="secondary" onClick={onCancel}>
            Cancel
          </Button>
        </div>
      </form>
      <FormError message={serverError} />
    </PresetPanel>
  );
}
