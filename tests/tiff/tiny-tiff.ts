// Hand-made little-endian classic TIFF bytes for malformed-file cases no tool will write.
// Layout per TIFF 6.0: 8-byte header, IFD = 2-byte count, 12-byte entries, 4-byte next offset.

export interface Entry {
  tag: number;
  type: 3 | 4;
  count: number;
  value: number;
}

/** One 8-bit strip image at IFD offset 8, its pixel bytes after the IFD; `next` is the next-IFD offset. */
export function tinyTiff(options: { width?: number; height?: number; compression?: number; next?: number; extra?: Entry[]; firstIfd?: number } = {}): Uint8Array {
  const width = options.width ?? 4;
  const height = options.height ?? 2;
  const base: Entry[] = [
    { tag: 256, type: 3, count: 1, value: width },
    { tag: 257, type: 3, count: 1, value: height },
    { tag: 258, type: 3, count: 1, value: 8 },
    { tag: 259, type: 3, count: 1, value: options.compression ?? 1 },
    { tag: 262, type: 3, count: 1, value: 1 },
    { tag: 273, type: 4, count: 1, value: 0 },
    { tag: 277, type: 3, count: 1, value: 1 },
    { tag: 278, type: 3, count: 1, value: height },
    { tag: 279, type: 4, count: 1, value: width * height },
  ];
  const entries = [...base, ...(options.extra ?? [])].sort((a, b) => a.tag - b.tag);
  const ifdSize = 2 + entries.length * 12 + 4;
  const dataOffset = 8 + ifdSize;
  const bytes = new Uint8Array(dataOffset + width * height);
  const v = new DataView(bytes.buffer);
  bytes.set([0x49, 0x49]);
  v.setUint16(2, 42, true);
  v.setUint32(4, options.firstIfd ?? 8, true);
  v.setUint16(8, entries.length, true);
  entries.forEach((e, i) => {
    const at = 10 + i * 12;
    v.setUint16(at, e.tag, true);
    v.setUint16(at + 2, e.type, true);
    v.setUint32(at + 4, e.count, true);
    const value = e.tag === 273 ? dataOffset : e.value;
    if (e.type === 3) v.setUint16(at + 8, value, true);
    else v.setUint32(at + 8, value, true);
  });
  v.setUint32(10 + entries.length * 12, options.next ?? 0, true);
  for (let i = 0; i < width * height; i++) bytes[dataOffset + i] = i * 7;
  return bytes;
}
