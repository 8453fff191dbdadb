"use client";

import type { ReactNode } from "react";
import { SelectField, TextField } from "@/components/ui/field";
import type { PlannerFields, PlannerKey } from "@/lib/schemas/planner";

interface Props {
  fields: PlannerFields;
  errors: Partial<Record<PlannerKey, string>>;
  onChange: (key: PlannerKey, value: string) => void;
}

function Group({ legend, children }: { legend: string; children: ReactNode }) {
  return (
    <fieldset className="space-y-3 rounded-md border border-paper-200 bg-white p-4">
      <legend className="px-1 text-sm font-semibold">{legend}</legend>
      {children}
    </fieldset>
  );
}

/** The planner's inputs; every one is a labelled native control, so Tab and typing are all it takes. */
export function PlannerForm({ fields, errors, onChange }: Props) {
  // Text inputs rather than type=number: the typed text is kept as is (and in the URL), and the
  // schema gives one clear message instead of the browser silently dropping what it cannot parse.
  const number = (key: PlannerKey, label: string, options: { decimal?: boolean; hint?: ReactNode } = {}) => (
    <TextField
      label={label}
      name={key}
      inputMode={options.decimal ? "decimal" : "numeric"}
      autoComplete="off"
      value={fields[key] as string}
      error={errors[key]}
      hint={options.hint}
      onChange={(e) => onChange(key, e.target.value)}
    />
  );
  const select = (key: PlannerKey, label: string, options: [string, string][]) => (
    <SelectField label={label} name={key} value={fields[key] as string} error={errors[key]} onChange={(e) => onChange(key, e.target.value)}>
      {options.map(([value, text]) => (
        <option key={value} value={value}>
          {text}
        </option>
      ))}
    </SelectField>
  );
  const byDuration = fields.mode === "duration";

  return (
    <form aria-label="Acquisition plan" className="space-y-4" onSubmit={(e) => e.preventDefault()}>
      <Group legend="Camera">
        <div className="grid grid-cols-2 gap-3">
          {number("w", "Width (px)")}
          {number("h", "Height (px)")}
        </div>
        {select("bpp", "Bytes per pixel", [
          ["1", "1 — 8-bit"],
          ["2", "2 — 10 to 16-bit (16-bit container)"],
          ["4", "4 — 32-bit float"],
        ])}
      </Group>
      <Group legend="Each time point">
        <div className="grid grid-cols-3 gap-3">
          {number("c", "Channels")}
          {number("z", "Z-slices")}
          {number("p", "Positions")}
        </div>
      </Group>
      <Group legend="Time-lapse">
        <div role="radiogroup" aria-label="Give the time-lapse as" className="flex flex-wrap gap-x-4 gap-y-1 text-sm">
          {(
            [
              ["duration", "Interval and duration"],
              ["count", "Number of time points"],
            ] as const
          ).map(([value, text]) => (
            <label key={value} className="inline-flex items-center gap-2">
              <input type="radio" name="mode" value={value} checked={fields.mode === value} onChange={() => onChange("mode", value)} />
              {text}
            </label>
          ))}
        </div>
        {!byDuration && number("tp", "Time points")}
        <div className="grid grid-cols-[1fr_6.5rem] items-start gap-3">
          {number("iv", "Interval", { decimal: true, hint: byDuration ? undefined : "Optional: gives the rate per hour and day." })}
          {select("ivu", "Interval unit", [
            ["s", "s"],
            ["min", "min"],
            ["h", "h"],
          ])}
        </div>
        {byDuration && (
          <div className="grid grid-cols-[1fr_6.5rem] items-start gap-3">
            {number("dur", "Duration", { decimal: true })}
            {select("duru", "Duration unit", [
              ["min", "min"],
              ["h", "h"],
              ["d", "days"],
            ])}
          </div>
        )}
      </Group>
      <Group legend="Field of view">
        <div className="grid grid-cols-2 gap-3">
          {number("m1", "From magnification (×)", { decimal: true })}
          {number("m2", "To magnification (×)", { decimal: true })}
        </div>
        {number("pitch", "Camera pixel pitch (µm)", { decimal: true, hint: "Optional: gives the field's size at the sample." })}
      </Group>
    </form>
  );
}
