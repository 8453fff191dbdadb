import { z } from "zod";
import { createPresetBody, type CreatePresetBody } from "./preset";

// The "New preset" form on the Presets page. Inputs hold text (an emptied number box is "", not 0),
// so the form has its own flat shape; the final check is createPresetBody itself, so the form and
// the route refuse exactly the same presets. Its messages are moved onto the form's field names.

export const FORM_MAX_CHANNELS = 4;

/** Ranges a new channel starts with: the whole 16-bit scale, or the 0.1–99.9 % Fit common practice. */
export const DEFAULT_COUNTS = { black: "0", white: "65535" } as const;
export const DEFAULT_PERCENTILES = { low: "0.1", high: "99.9" } as const;

const formChannel = z.object({
  matchName: z.string(),
  index: z.string(),
  visible: z.boolean(),
  colour: z.string(),
  /** "" = no table: a ramp from black to the colour. */
  tableId: z.string(),
  gamma: z.string(),
  mode: z.enum(["counts", "percentiles"]),
  black: z.string(),
  white: z.string(),
  low: z.string(),
  high: z.string(),
});
export type PresetFormChannel = z.infer<typeof formChannel>;

const formShape = z.object({
  name: z.string(),
  scope: z.string(),
  blend: z.string(),
  channels: z.array(formChannel),
});
export type PresetFormValues = z.infer<typeof formShape>;

/** Number(" ") is 0 and Number("1e3") is 1000; only a plainly written decimal counts as a number. */
const NUMBER = /^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/;
const parseNumber = (text: string): number | null => (NUMBER.test(text.trim()) ? Number(text.trim()) : null);

/** Body field path → form field path (e.g. channels.0.range.white → channels.0.white). */
export function formFieldPath(bodyPath: readonly PropertyKey[]): string {
  const [head, i, key, sub] = bodyPath.map(String);
  if (head !== "channels" || i === undefined) return head ?? "";
  if (key === "match") return `channels.${i}.${sub === "name" ? "matchName" : "index"}`;
  if (key === "range") return `channels.${i}.${sub && sub !== "mode" ? sub : "mode"}`;
  return key ? `channels.${i}.${key}` : "channels";
}

/** The numbers the form must be able to read before the body can be built, with their form paths. */
function readNumbers(values: PresetFormValues) {
  const problems: { path: (string | number)[]; message: string }[] = [];
  const channels = values.channels.map((ch, i) => {
    const read = (key: "index" | "gamma" | "black" | "white" | "low" | "high") => {
      const n = parseNumber(ch[key]);
      if (n === null) problems.push({ path: ["channels", i, key], message: ch[key].trim() ? "Write a number, e.g. 12.5." : "Enter a number." });
      return n ?? 0;
    };
    const index = read("index");
    if (ch.index.trim() && (!Number.isInteger(index) || index < 0)) problems.push({ path: ["channels", i, "index"], message: "Use a whole number from 0 (the first channel is 0)." });
    const gamma = read("gamma");
    const range = ch.mode === "counts" ? { mode: "counts" as const, black: read("black"), white: read("white") } : { mode: "percentiles" as const, low: read("low"), high: read("high") };
    return { index, gamma, range };
  });
  return { channels, problems };
}

/** The request body the form describes (numbers already read). */
export function toCreateBody(values: PresetFormValues, numbers: ReturnType<typeof readNumbers>["channels"]): CreatePresetBody {
  return {
    name: values.name,
    scope: values.scope as CreatePresetBody["scope"],
    blend: values.blend as CreatePresetBody["blend"],
    channels: values.channels.map((ch, i) => ({
      match: { ...(ch.matchName.trim() ? { name: ch.matchName } : {}), index: numbers[i].index },
      visible: ch.visible,
      colour: ch.colour,
      tableId: ch.tableId || null,
      gamma: numbers[i].gamma,
      range: numbers[i].range,
    })),
  };
}

/** Form text in, a createPresetBody-valid body out; every message lands on the field it is about. */
export const presetForm = formShape.transform((values, ctx): CreatePresetBody => {
  if (values.channels.length > FORM_MAX_CHANNELS) {
    ctx.addIssue({ code: "custom", path: ["channels"], message: `This form makes presets of at most ${FORM_MAX_CHANNELS} channels.` });
    return z.NEVER;
  }
  const numbers = readNumbers(values);
  for (const p of numbers.problems) ctx.addIssue({ code: "custom", path: p.path, message: p.message });
  const parsed = createPresetBody.safeParse(toCreateBody(values, numbers.channels));
  if (!parsed.success) {
    const seen = new Set(numbers.problems.map((p) => p.path.join(".")));
    for (const issue of parsed.error.issues) {
      const path = formFieldPath(issue.path);
      // A field whose text is not a number already says so; zod's "expected number" would only repeat it.
      if (seen.has(path)) continue;
      seen.add(path);
      ctx.addIssue({ code: "custom", path: path.split(".").map((s) => (/^\d+$/.test(s) ? Number(s) : s)), message: issue.message });
    }
  }
  if (numbers.problems.length || !parsed.success) return z.NEVER;
  return parsed.data;
});
