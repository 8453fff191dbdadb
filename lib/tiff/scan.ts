import type { ByteSource } from "./byte-source";
import { decodeIfd, type DecodedPlane, type DecodeOptions } from "./decode";
import type { IfdInfo, TiffHeader } from "./structure";

/**
 * Decodes planes one after another with one plane of lookahead: the read of plane k + 1 is under
 * way (file reads run off the main thread) while the caller counts plane k, so reading and
 * counting overlap. Used by the ingest and by its benchmark.
 */
export async function* scanPlanes(
  source: ByteSource,
  header: TiffHeader,
  ifds: readonly IfdInfo[],
  options: Pick<DecodeOptions, "signal" | "inflate"> = {},
): AsyncGenerator<{ index: number; ifd: IfdInfo; plane: DecodedPlane }> {
  const start = (i: number) => {
    const pending = decodeIfd(source, header, ifds[i], options.signal, options.inflate);
    // Marked handled now; the rejection still reaches the caller when it awaits this plane.
    pending.catch(() => undefined);
    return pending;
  };
  let next = ifds.length > 0 ? start(0) : null;
  for (let i = 0; i < ifds.length; i++) {
    const plane = await next!;
    next = i + 1 < ifds.length ? start(i + 1) : null;
    yield { index: i, ifd: ifds[i], plane };
  }
}
