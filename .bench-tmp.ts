import { pixelBenches } from "./tests/bench/pixels";
console.table((await pixelBenches()).map((r) => ({ ...r, ratio: r.ratio.toFixed(4) })));
