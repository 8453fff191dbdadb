import { describe, expect, it } from "vitest";
import { createPresetBody } from "@/lib/schemas/preset";
import { formFieldPath, presetForm, type PresetFormChannel, type PresetFormValues } from "@/lib/schemas/preset-form";

const row = (over: Partial<PresetFormChannel> = {}): PresetFormChannel => ({
  matchName: "",
  index: "0",
  visible: true,
  colour: "#0072b2",
  tableId: "",
  gamma: "1",
  mode: "percentiles",
  black: "0",
  white: "65535",
  low: "0.1",
  high: "99.9",
  ...over,
});
const form = (channels: PresetFormChannel[], over: Partial<PresetFormValues> = {}): PresetFormValues => ({ name: "Nuclei", scope: "lab", blend: "max", channels, ...over });
const errors = (values: PresetFormValues) => {
  const r = presetForm.safeParse(values);
  return r.success ? {} : Object.fromEntries(r.error.issues.map((i) => [i.path.join("."), i.message]));
};

describe("presetForm", () => {
  it("turns the form's text into the body the route accepts, keeping only the chosen range", () => {
    const r = presetForm.parse(
      form([
        row({ matchName: " DAPI ", index: "0", mode: "counts", black: "120", white: "3000.5", tableId: "viridis", gamma: "0.8" }),
        row({ index: "3", visible: false, colour: "#e69f00" }),
      ]),
    );
    expect(r).toEqual({
      name: "Nuclei",
      scope: "lab",
      blend: "max",
      channels: [
        { match: { name: "DAPI", index: 0 }, visible: true, colour: "#0072b2", tableId: "viridis", gamma: 0.8, range: { mode: "counts", black: 120, white: 3000.5 } },
        { match: { index: 3 }, visible: false, colour: "#e69f00", tableId: null, gamma: 1, range: { mode: "percentiles", low: 0.1, high: 99.9 } },
      ],
    });
    expect(createPresetBody.parse(r)).toEqual(r);
  });

  it("puts the server schema's messages on the form's fields", () => {
    expect(errors(form([row({ mode: "counts", black: "500", white: "500" }), row({ high: "0.05" })], { name: "  " }))).toEqual({
      name: "The preset needs a name.",
      "channels.0.white": "The black point must be below the white point.",
      "channels.1.high": "The low percentile must be below the high one.",
    });
    expect(errors(form([row({ gamma: "9", colour: "red" })]))).toEqual({
      "channels.0.gamma": "Gamma is at most 5.",
      "channels.0.colour": "Use a colour written as #rrggbb.",
    });
  });

  it("says when a number box is empty or not a number, without zod's type message as well", () => {
    expect(errors(form([row({ mode: "counts", black: "", white: "4k" }), row({ index: "1.5", low: " " })]))).toEqual({
      "channels.0.black": "Enter a number.",
      "channels.0.white": "Write a number, e.g. 12.5.",
      "channels.1.index": "Use a whole number from 0 (the first channel is 0).",
      "channels.1.low": "Enter a number.",
    });
  });

  it("refuses more than four channels and none", () => {
    expect(errors(form([row(), row(), row(), row(), row()]))).toEqual({ channels: "This form makes presets of at most 4 channels." });
    expect(errors(form([]))).toEqual({ channels: "A preset has at least one channel." });
  });

  it("maps server field keys onto form fields", () => {
    expect(formFieldPath(["channels", 2, "range", "black"])).toBe("channels.2.black");
    expect(formFieldPath(["channels", 0, "range"])).toBe("channels.0.mode");
    expect(formFieldPath(["channels", 1, "match", "name"])).toBe("channels.1.matchName");
    expect(formFieldPath(["channels", 1, "match", "index"])).toBe("channels.1.index");
    expect(formFieldPath(["name"])).toBe("name");
  });
});
