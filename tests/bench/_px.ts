import { pixelBenches } from "./pixels";
const rows = await pixelBenches();
for (const r of rows) console.log(r.bench, "|", r.measured, "|", r.baseline, "|", r.met);
