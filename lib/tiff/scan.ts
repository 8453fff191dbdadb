import type { ByteSource } from "./byte-source";
import { decodeIfd, type DecodedPlane, type DecodeOptions } from "./decode";
import type { IfdInfo, TiffHeader } from "./structure";

export interface ScanOptions extends Pick<DecodeOptions, "signal" | "inflate"> {
  /**
   * Planes decoding ahead of the one the caller is counting (default 1). With an inflate that runs
   * off the main thread, 2 keeps blocks queued for the inflate threads while the caller counts, so
   * the threads do not wait for the main thread between planes. Each plane ahead holds one decoded
   * plane (and its compressed bytes) in memory.
   */
  lookahead?: number;
}

/**
 * Decodes planes one after another with `lookahead` planes decoding ahead: the reads (and, with an
 * asynchronous inflate, the inflates) of the next planes are under way while the caller counts
 * plane k, so decoding and counting overlap. Planes are yielded in file order whatever order their
 * decodes finish in. Used by the ingest and by its benchmark.
 */
export async function* scanPlanes(
  source: ByteSource,
  header: TiffHeader,
  ifds: readonly IfdInfo[],
  options: ScanOptions = {},
): AsyncGenerator<{ index: number; ifd: IfdInfo; plane: DecodedPlane }> {
  const lookahead = Math.max(1, Math.floor(options.lookahead ?? 1));
  const start = (i: number) => {
    const pending = decodeIfd(source, header, ifds[i], options.signal, options.inflate);
    // Marked handled now; the rejection still reaches the caller when it awaits this plane.
    pending.catch(() => undefined);
    return pending;
  };
  const ahead: Promise<DecodedPlane>[] = [];
  let started = 0;
  const fill = () => {
    while (started < ifds.length && ahead.length < lookahead) ahead.push(start(started++));
  };
  fill();
  for (let i = 0; i < ifds.length; i++) {
    const plane = await ahead.shift()!;
    fill();
    yield { index: i, ifd: ifds[i], plane };
  }
}
