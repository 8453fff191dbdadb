// A photon-transfer series as a TIFF (dark pair, then flat pairs) from the synthetic camera of
// lib/imaging/synthetic.ts, whose gain, offset and read noise are known, for the HTTP and browser tests.
import { DEMO_CAMERA, photonTransferFrames, saturationElectrons, type CameraModel } from "@/lib/imaging/synthetic";
import { writeTiff } from "@/lib/tiff/writer";

export interface SeriesFile {
  bytes: Uint8Array;
  frames: Uint16Array[];
  camera: CameraModel;
  /** What the upload form says for a file without OME-XML: one channel, the frames as time points. */
  dimensions: { sizeC: number; sizeZ: number; sizeT: number; order: "XYCZT" };
}

/** Levels as fractions of the ADC range: six on the linear part, then past saturation (as the demo seed's). */
export const SERIES_FRACTIONS = [0.03, 0.1, 0.2, 0.35, 0.5, 0.65, 0.95, 1.1];

export async function photonTransferTiff(options: { camera?: CameraModel; fractions?: readonly number[]; side?: number; seed?: number } = {}): Promise<SeriesFile> {
  const camera = options.camera ?? DEMO_CAMERA;
  const side = options.side ?? 128;
  const fractions = options.fractions ?? SERIES_FRACTIONS;
  const frames = [...photonTransferFrames({ width: side, height: side, levelsE: fractions.map((f) => f * saturationElectrons(camera)), camera, seed: options.seed ?? 7 })];
  const bytes = await writeTiff(frames, { width: side, height: side, bitsPerSample: 16 });
  return { bytes, frames, camera, dimensions: { sizeC: 1, sizeZ: 1, sizeT: frames.length, order: "XYCZT" } };
}
