/**
 * Synthetic demo stacks. The scenario is INVENTED, not measured: cultured cells imaged on a 12-bit
 * camera with three stains — a nuclear stain, a membrane marker and a mitochondrial marker. Cells
 * drift and some brighten over time, fade and blur away from their focal slice, and in the nuclear
 * channel a few cells are bright enough to clip at the ceiling.
 *
 * Camera: EMVA Standard 1288 linear model (Release 3.1, 2016): photoelectrons are Poisson, read noise
 * is Gaussian in electrons, the system gain K converts electrons to DN, an offset is added, the value
 * is rounded (quantisation noise 1/12 DN²) and clipped to 0…ceiling. Dark current is left out.
 */
import { createRandom, type Random } from "./random";

export interface CameraModel {
  /** System gain K, DN per electron. */
  gainDnPerE: number;
  /** Offset (bias) added by the camera, DN. */
  offsetDn: number;
  /** Temporal dark noise σd, electrons (RMS). */
  readNoiseE: number;
  /** Highest code the ADC produces (4095 for 12 bits, stored in 16-bit containers). */
  ceiling: number;
}

/** Invented sCMOS-like values: K = 0.5 DN/e⁻, offset 100 DN (FACTS.md, common practice), σd = 2.2 e⁻, 12 bits. */
export const DEMO_CAMERA: CameraModel = { gainDnPerE: 0.5, offsetDn: 100, readNoiseE: 2.2, ceiling: 4095 };

/** Electrons at which the ADC reaches its ceiling: (ceiling − offset) / K. */
export function saturationElectrons(camera: CameraModel): number {
  return (camera.ceiling - camera.offsetDn) / camera.gainDnPerE;
}

/**
 * One exposure: expected photoelectrons per pixel → stored DN. Per pixel
 * y = clip(round(offset + K·(Poisson(μe) + σd·N(0,1))), 0, ceiling) (EMVA 1288 linear model).
 */
export function exposeCamera(expectedE: ArrayLike<number>, camera: CameraModel, random: Random, out: Uint16Array = new Uint16Array(expectedE.length)): Uint16Array {
  const { gainDnPerE: k, offsetDn, readNoiseE, ceiling } = camera;
  for (let i = 0; i < expectedE.length; i++) {
    const lambda = expectedE[i];
    const electrons = lambda > 0 ? random.poisson(lambda) : 0;
    const y = Math.floor(offsetDn + k * (electrons + readNoiseE * random.normal()) + 0.5);
    out[i] = y < 0 ? 0 : y > ceiling ? ceiling : y;
  }
  return out;
}

/**
 * Relative sensitivity of each pixel: uneven illumination (a radial fall-off to ~70 % in the corners,
 * centred off the middle) times 1 % photo-response non-uniformity. The flat-field frame records it.
 */
export function responseMap(width: number, height: number, seed: number, options: { falloff?: number; prnu?: number } = {}): Float32Array {
  const falloff = options.falloff ?? 0.3;
  const prnu = options.prnu ?? 0.01;
  const random = createRandom(seed);
  const cx = width * 0.55;
  const cy = height * 0.45;
  const r2max = Math.max(cx, width - cx) ** 2 + Math.max(cy, height - cy) ** 2;
  const out = new Float32Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const r2 = (x - cx) ** 2 + (y - cy) ** 2;
      out[y * width + x] = (1 - falloff * (r2 / r2max)) * (1 + prnu * random.normal());
    }
  }
  return out;
}

export type StainKind = "nucleus" | "membrane" | "mitochondria";

export interface SceneChannel {
  name: string;
  kind: StainKind;
  /** Nanometres (invented but typical of such stains). */
  emissionWavelength: number;
  /** "#rrggbb" display colour, chosen from a colour-blind-safe set (Wong, Nature Methods 8:441, 2011). */
  color: string;
  /** Background photoelectrons per pixel (autofluorescence, stray light). */
  backgroundE: number;
  /** Peak photoelectrons of an ordinary cell in focus at t = 0. */
  peakE: number;
  /** Peak photoelectrons of the over-bright cells; only the designated channel has them. */
  saturatedPeakE?: number;
}

export interface Cell {
  /** Centre at t = 0, pixels. */
  x: number;
  y: number;
  /** Drift, pixels per time point. */
  vx: number;
  vy: number;
  /** Cell and nucleus radii, pixels. */
  radius: number;
  nucleusRadius: number;
  /** Slice (0-based, fractional) where the cell is in focus. */
  focusZ: number;
  /** Relative brightness gain from the first to the last time point (0 = steady). */
  brightening: number;
  /** Over-bright in the channel that has saturatedPeakE. */
  overBright: boolean;
  phase: number;
  /** Mitochondrial puncta, offsets from the centre in pixels. */
  puncta: { dx: number; dy: number }[];
}

export interface Scene {
  width: number;
  height: number;
  sizeZ: number;
  sizeT: number;
  channels: SceneChannel[];
  cells: Cell[];
  response: Float32Array;
}

/** Colour-blind-safe colours from Wong (2011): blue, bluish green, vermillion. */
export const DEMO_CHANNELS: SceneChannel[] = [
  { name: "nuclear stain", kind: "nucleus", emissionWavelength: 461, color: "#0072b2", backgroundE: 30, peakE: 1500, saturatedPeakE: 20000 },
  { name: "membrane marker", kind: "membrane", emissionWavelength: 520, color: "#009e73", backgroundE: 40, peakE: 1400 },
  { name: "mitochondrial marker", kind: "mitochondria", emissionWavelength: 610, color: "#d55e00", backgroundE: 25, peakE: 1300 },
];

/**
 * Places cells without overlap at t = 0 (so the non-designated channels stay below the ceiling:
 * at most two cells overlap after drifting, at under half of saturation each).
 */
export function makeScene(input: {
  width: number;
  height: number;
  sizeZ: number;
  sizeT: number;
  channels: SceneChannel[];
  cellCount: number;
  overBrightCells: number;
  seed: number;
  /** Shared with the flat-field frame so a flat correction applies; default made from the seed. */
  response?: Float32Array;
}): Scene {
  const random = createRandom(input.seed);
  const cells: Cell[] = [];
  for (let attempt = 0; cells.length < input.cellCount && attempt < 10000; attempt++) {
    const radius = 22 + 8 * random.uniform();
    const x = radius + random.uniform() * (input.width - 2 * radius);
    const y = radius + random.uniform() * (input.height - 2 * radius);
    if (cells.some((c) => Math.hypot(c.x - x, c.y - y) < c.radius + radius + 4)) continue;
    const nucleusRadius = radius * (0.4 + 0.1 * random.uniform());
    const puncta = Array.from({ length: 10 + Math.floor(10 * random.uniform()) }, () => {
      const angle = 2 * Math.PI * random.uniform();
      const r = nucleusRadius + 2 + (radius - nucleusRadius - 5) * random.uniform();
      return { dx: r * Math.cos(angle), dy: r * Math.sin(angle) };
    });
    cells.push({
      x,
      y,
      vx: (random.uniform() - 0.5) * 0.6,
      vy: (random.uniform() - 0.5) * 0.6,
      radius,
      nucleusRadius,
      focusZ: (input.sizeZ - 1) / 2 + (random.uniform() - 0.5) * Math.min(2, input.sizeZ - 1),
      brightening: random.uniform() < 0.4 ? 0.3 + 0.5 * random.uniform() : 0,
      overBright: cells.length < input.overBrightCells,
      phase: 2 * Math.PI * random.uniform(),
      puncta,
    });
  }
  return { ...input, cells, response: input.response ?? responseMap(input.width, input.height, input.seed ^ 0x5bd1e995) };
}

/** Expected photoelectrons per pixel of channel c at slice z and time point t (no noise yet). */
export function renderSignal(scene: Scene, c: number, z: number, t: number, out: Float32Array = new Float32Array(scene.width * scene.height)): Float32Array {
  const { width, height, channels, cells, response } = scene;
  const ch = channels[c];
  out.fill(0);
  for (const cell of cells) {
    const progress = scene.sizeT > 1 ? t / (scene.sizeT - 1) : 0;
    const cx = cell.x + cell.vx * t + 1.5 * Math.sin(0.3 * t + cell.phase);
    const cy = cell.y + cell.vy * t + 1.5 * Math.cos(0.25 * t + cell.phase);
    const dz = z - cell.focusZ;
    // Out of focus: dimmer (Gaussian in z, σ = 1.8 slices) and softer edges (invented, plausible).
    const amplitude = (cell.overBright && ch.saturatedPeakE ? ch.saturatedPeakE : ch.peakE) * (1 + cell.brightening * progress) * Math.exp(-(dz * dz) / (2 * 1.8 * 1.8));
    const blur = 1.2 + 0.8 * Math.abs(dz);
    if (ch.kind === "mitochondria") {
      const s2 = 2 * (1.3 + 0.5 * Math.abs(dz)) ** 2;
      // Out to where the Gaussian falls below e^−9 ≈ 1e-4 of its peak.
      const r = Math.ceil(Math.sqrt(s2 * 9));
      for (const p of cell.puncta) {
        const px = cx + p.dx;
        const py = cy + p.dy;
        for (let y = Math.max(0, Math.floor(py) - r); y <= Math.min(height - 1, Math.ceil(py) + r); y++) {
          for (let x = Math.max(0, Math.floor(px) - r); x <= Math.min(width - 1, Math.ceil(px) + r); x++) {
            out[y * width + x] += amplitude * Math.exp(-((x - px) ** 2 + (y - py) ** 2) / s2);
          }
        }
      }
      continue;
    }
    // Pixels beyond these radii get under 1e-4 of the peak (logistic tail e^−10, Gaussian ring 4.3 σ).
    const outer = ch.kind === "nucleus" ? cell.nucleusRadius + 10 * blur : cell.radius * 1.08 + 4.3 * blur;
    const inner = ch.kind === "nucleus" ? -1 : Math.max(0, cell.radius * 0.92 - 4.3 * blur);
    const x0 = Math.max(0, Math.floor(cx - outer));
    const x1 = Math.min(width - 1, Math.ceil(cx + outer));
    const y0 = Math.max(0, Math.floor(cy - outer));
    const y1 = Math.min(height - 1, Math.ceil(cy + outer));
    for (let y = y0; y <= y1; y++) {
      for (let x = x0; x <= x1; x++) {
        const ddx = x - cx;
        const ddy = y - cy;
        const r = Math.sqrt(ddx * ddx + ddy * ddy);
        if (r > outer || r < inner) continue;
        let v: number;
        if (ch.kind === "nucleus") {
          // A disc with a logistic edge: a blurred blob.
          v = 1 / (1 + Math.exp((r - cell.nucleusRadius) / blur));
        } else {
          // A ring at the cell edge, wobbling with angle so cells are not perfect circles.
          const edge = cell.radius * (1 + 0.08 * Math.sin(3 * Math.atan2(ddy, ddx) + cell.phase));
          v = Math.exp(-((r - edge) ** 2) / (2 * blur * blur));
        }
        out[y * width + x] += amplitude * v;
      }
    }
  }
  for (let i = 0; i < out.length; i++) out[i] = (out[i] + ch.backgroundE) * response[i];
  return out;
}

/** One noisy plane of the scene through the camera. */
export function scenePlane(scene: Scene, camera: CameraModel, c: number, z: number, t: number, random: Random, scratch?: Float32Array): Uint16Array {
  return exposeCamera(renderSignal(scene, c, z, t, scratch), camera, random);
}

/**
 * Frames of a photon-transfer series (EMVA 1288 mean–variance method): page 0 and 1 a dark pair,
 * then for each level i pages 2 + 2i and 3 + 2i a flat pair at `levelsE[i]` mean photoelectrons.
 * Illumination is uniform; the 1 % PRNU of `response` is kept, which the pair difference cancels.
 */
export function* photonTransferFrames(input: { width: number; height: number; levelsE: readonly number[]; camera: CameraModel; seed: number }): Generator<Uint16Array> {
  const { width, height, levelsE, camera } = input;
  const random = createRandom(input.seed);
  const prnu = responseMap(width, height, input.seed ^ 0x27d4eb2f, { falloff: 0 });
  const expected = new Float32Array(width * height);
  for (const level of [0, ...levelsE]) {
    for (let i = 0; i < expected.length; i++) expected[i] = level * prnu[i];
    yield exposeCamera(expected, camera, random);
    yield exposeCamera(expected, camera, random);
  }
}

/** A master frame: the mean of `frames` exposures, rounded (FACTS.md: a master flat averages several frames). */
export function masterFrame(expectedE: ArrayLike<number>, camera: CameraModel, random: Random, frames: number): Uint16Array {
  const sum = new Float64Array(expectedE.length);
  const scratch = new Uint16Array(expectedE.length);
  for (let f = 0; f < frames; f++) {
    exposeCamera(expectedE, camera, random, scratch);
    for (let i = 0; i < sum.length; i++) sum[i] += scratch[i];
  }
  return Uint16Array.from(sum, (s) => Math.round(s / frames));
}
