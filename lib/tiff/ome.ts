import { XMLParser, XMLValidator } from "fast-xml-parser";

/** Text that is not OME-XML, or OME-XML missing what a plane index needs; the message is meant for a person. */
export class OmeXmlError extends Error {
  override name = "OmeXmlError";
}

/** The six orders of OME-XML schema 2016-06; the letter after XY varies fastest from one IFD to the next. */
export const DIMENSION_ORDERS = ["XYZCT", "XYZTC", "XYCTZ", "XYCZT", "XYTCZ", "XYTZC"] as const;
export type DimensionOrder = (typeof DIMENSION_ORDERS)[number];

export interface PlaneSizes {
  sizeZ: number;
  sizeC: number;
  sizeT: number;
}

/** 0-based channel, z-slice and time point of one plane. */
export interface PlaneCoord {
  c: number;
  z: number;
  t: number;
}

export interface OmeChannel {
  name: string | null;
  /** Nanometres. */
  emissionWavelengthNm: number | null;
  /** "#rrggbb" from the signed 32-bit RGBA integer; alpha (0–255) kept apart. */
  colour: string | null;
  alpha: number | null;
}

export interface OmePlane extends PlaneCoord {
  /** Seconds since the start of the acquisition. */
  deltaTSeconds: number | null;
}

/** Which IFDs hold which planes, when the file says so explicitly. */
export interface OmeTiffData {
  ifd: number;
  firstC: number;
  firstZ: number;
  firstT: number;
  planeCount: number | null;
}

export interface OmeImage {
  name: string | null;
  sizeX: number;
  sizeY: number;
  sizeZ: number;
  sizeC: number;
  sizeT: number;
  dimensionOrder: DimensionOrder;
  /** OME pixel type, e.g. "uint16". */
  type: string;
  significantBits: number | null;
  /** Micrometres per pixel (x, y) and per z step; null when absent or in a unit with no length (pixel). */
  physicalSizeUm: { x: number | null; y: number | null; z: number | null };
  timeIncrementSeconds: number | null;
  channels: OmeChannel[];
  planes: OmePlane[];
  tiffData: OmeTiffData[];
}

export interface OmeMetadata {
  images: OmeImage[];
}

// Powers of ten relative to the micrometre; OME-XML UnitsLength (schema 2016-06). Both micro signs are accepted.
const LENGTH_EXP_UM: Record<string, number> = {
  km: 9, m: 6, dm: 5, cm: 4, mm: 3, "µm": 0, "μm": 0, um: 0, nm: -3, "Å": -4, pm: -6,
};
// Inch-based units are exact multiples of the micrometre (1 in = 25 400 µm by definition).
const LENGTH_FACTOR_UM: Record<string, number> = { in: 25400, thou: 25.4, ft: 304800, yd: 914400 };
const TIME_EXP_S: Record<string, number> = { s: 0, ms: -3, "µs": -6, "μs": -6, us: -6, ns: -9, ps: -12 };
const TIME_FACTOR_S: Record<string, number> = { min: 60, h: 3600, d: 86400 };

function scale(value: number, exp: number): number {
  // Dividing by an exact power of ten keeps 650 nm → 0.65 µm exact in binary floating point.
  return exp >= 0 ? value * 10 ** exp : value / 10 ** -exp;
}

/** Converts a length to micrometres; null for units without a physical length (pixel, reference frame). */
export function lengthToMicrometres(value: number, unit = "µm"): number | null {
  if (unit in LENGTH_EXP_UM) return scale(value, LENGTH_EXP_UM[unit]);
  if (unit in LENGTH_FACTOR_UM) return value * LENGTH_FACTOR_UM[unit];
  return null;
}

function lengthToNanometres(value: number, unit: string): number | null {
  if (unit in LENGTH_EXP_UM) return scale(value, LENGTH_EXP_UM[unit] + 3);
  const um = lengthToMicrometres(value, unit);
  return um === null ? null : um * 1000;
}

/** Converts a time to seconds; null for an unknown unit. */
export function timeToSeconds(value: number, unit = "s"): number | null {
  if (unit in TIME_EXP_S) return scale(value, TIME_EXP_S[unit]);
  if (unit in TIME_FACTOR_S) return value * TIME_FACTOR_S[unit];
  return null;
}

/** OME Color is a signed 32-bit integer holding RGBA, red in the top byte (-1 is opaque white). */
export function omeColourToHex(value: number): { colour: string; alpha: number } {
  const u = value >>> 0;
  const hex = (n: number) => n.toString(16).padStart(2, "0");
  return { colour: `#${hex((u >>> 24) & 255)}${hex((u >>> 16) & 255)}${hex((u >>> 8) & 255)}`, alpha: u & 255 };
}

type Attrs = Record<string, unknown>;

const parser = new XMLParser({
  ignoreAttributes: false,
  attributeNamePrefix: "",
  removeNSPrefix: true,
  parseAttributeValue: false,
  parseTagValue: false,
  isArray: (name) => ["Image", "Channel", "Plane", "TiffData"].includes(name),
});

function str(a: Attrs, key: string): string | null {
  const v = a[key];
  return typeof v === "string" && v.trim() !== "" ? v.trim() : null;
}

function num(a: Attrs, key: string, where: string): number | null {
  const s = str(a, key);
  if (s === null) return null;
  const n = Number(s);
  if (!Number.isFinite(n)) throw new OmeXmlError(`${where}: ${key}="${s}" is not a number`);
  return n;
}

function int(a: Attrs, key: string, where: string, fallback: number | null, min = 0): number {
  const n = num(a, key, where);
  if (n === null) {
    if (fallback === null) throw new OmeXmlError(`${where} has no ${key}, which the plane index needs`);
    return fallback;
  }
  if (!Number.isInteger(n) || n < min) throw new OmeXmlError(`${where}: ${key}="${n}" must be a whole number of at least ${min}`);
  return n;
}

function length(a: Attrs, key: string, where: string): number | null {
  const v = num(a, key, where);
  return v === null ? null : lengthToMicrometres(v, str(a, `${key}Unit`) ?? "µm");
}

function time(a: Attrs, key: string, where: string): number | null {
  const v = num(a, key, where);
  return v === null ? null : timeToSeconds(v, str(a, `${key}Unit`) ?? "s");
}

function parseImage(image: Attrs, index: number): OmeImage {
  const where = `OME-XML Image ${index}`;
  const pixels = image.Pixels as Attrs | undefined;
  if (!pixels || typeof pixels !== "object") throw new OmeXmlError(`${where} has no Pixels element`);
  const order = str(pixels, "DimensionOrder");
  if (!order || !(DIMENSION_ORDERS as readonly string[]).includes(order)) {
    throw new OmeXmlError(`${where}: DimensionOrder "${order ?? ""}" is not one of ${DIMENSION_ORDERS.join(", ")}`);
  }
  const type = str(pixels, "Type");
  if (!type) throw new OmeXmlError(`${where} has no pixel Type`);

  const channels = ((pixels.Channel as Attrs[] | undefined) ?? []).map((ch, c): OmeChannel => {
    const w = `${where}, Channel ${c}`;
    const colourValue = num(ch, "Color", w);
    const colour = colourValue === null ? null : omeColourToHex(colourValue);
    const emission = num(ch, "EmissionWavelength", w);
    const unit = str(ch, "EmissionWavelengthUnit") ?? "nm";
    return {
      name: str(ch, "Name"),
      emissionWavelengthNm: emission === null ? null : unit === "nm" ? emission : lengthToNanometres(emission, unit),
      colour: colour?.colour ?? null,
      alpha: colour?.alpha ?? null,
    };
  });
  const planes = ((pixels.Plane as Attrs[] | undefined) ?? []).map((p, i): OmePlane => {
    const w = `${where}, Plane ${i}`;
    return { c: int(p, "TheC", w, null), z: int(p, "TheZ", w, null), t: int(p, "TheT", w, null), deltaTSeconds: time(p, "DeltaT", w) };
  });
  const tiffData = ((pixels.TiffData as Attrs[] | undefined) ?? []).map((d, i): OmeTiffData => {
    const w = `${where}, TiffData ${i}`;
    const count = num(d, "PlaneCount", w);
    return {
      ifd: int(d, "IFD", w, 0),
      firstC: int(d, "FirstC", w, 0),
      firstZ: int(d, "FirstZ", w, 0),
      firstT: int(d, "FirstT", w, 0),
      planeCount: count === null ? null : int(d, "PlaneCount", w, 0),
    };
  });

  return {
    name: str(image, "Name"),
    sizeX: int(pixels, "SizeX", where, null, 1),
    sizeY: int(pixels, "SizeY", where, null, 1),
    sizeZ: int(pixels, "SizeZ", where, null, 1),
    sizeC: int(pixels, "SizeC", where, null, 1),
    sizeT: int(pixels, "SizeT", where, null, 1),
    dimensionOrder: order as DimensionOrder,
    type,
    significantBits: num(pixels, "SignificantBits", where) === null ? null : int(pixels, "SignificantBits", where, null, 1),
    physicalSizeUm: { x: length(pixels, "PhysicalSizeX", where), y: length(pixels, "PhysicalSizeY", where), z: length(pixels, "PhysicalSizeZ", where) },
    timeIncrementSeconds: time(pixels, "TimeIncrement", where),
    channels,
    planes,
    tiffData,
  };
}

/** Parses OME-XML (schema 2016-06) as found in a TIFF ImageDescription. */
export function parseOmeXml(text: string): OmeMetadata {
  const trimmed = text.trim();
  if (!/<(\w+:)?OME[\s>]/.test(trimmed)) {
    throw new OmeXmlError("The image description is not OME-XML: it has no <OME> element");
  }
  const valid = XMLValidator.validate(trimmed);
  if (valid !== true) {
    throw new OmeXmlError(`The OME-XML is not well-formed: ${valid.err.msg} (line ${valid.err.line})`);
  }
  let doc: Attrs;
  try {
    doc = parser.parse(trimmed) as Attrs;
  } catch (e) {
    // The validator passes some text the parser then rejects (e.g. an unclosed <?xml declaration).
    throw new OmeXmlError(`The OME-XML is not well-formed: ${e instanceof Error ? e.message : String(e)}`);
  }
  const ome = doc.OME as Attrs | undefined;
  if (!ome || typeof ome !== "object") throw new OmeXmlError("The image description is not OME-XML: its root element is not <OME>");
  const images = (ome.Image as Attrs[] | undefined) ?? [];
  if (images.length === 0) throw new OmeXmlError("The OME-XML describes no Image");
  return { images: images.map(parseImage) };
}

function checkSizes(sizes: PlaneSizes): void {
  for (const [k, v] of Object.entries(sizes)) {
    if (!Number.isInteger(v) || v < 1) throw new RangeError(`${k} must be a whole number ≥ 1, got ${v}`);
  }
}

function sizeOf(axis: string, sizes: PlaneSizes): number {
  return axis === "Z" ? sizes.sizeZ : axis === "C" ? sizes.sizeC : sizes.sizeT;
}

/** The (c, z, t) of IFD number `ifd` for planes stored in `order` (default OME-TIFF layout). */
export function planeIndex(order: DimensionOrder, sizes: PlaneSizes, ifd: number): PlaneCoord {
  checkSizes(sizes);
  const total = sizes.sizeZ * sizes.sizeC * sizes.sizeT;
  if (!Number.isInteger(ifd) || ifd < 0 || ifd >= total) throw new RangeError(`IFD ${ifd} is outside 0…${total - 1}`);
  const coord: PlaneCoord = { c: 0, z: 0, t: 0 };
  let rest = ifd;
  for (const axis of order.slice(2)) {
    const n = sizeOf(axis, sizes);
    coord[axis.toLowerCase() as keyof PlaneCoord] = rest % n;
    rest = Math.floor(rest / n);
  }
  return coord;
}

/** The IFD number holding plane (c, z, t): the inverse of planeIndex. */
export function ifdIndex(order: DimensionOrder, sizes: PlaneSizes, coord: PlaneCoord): number {
  checkSizes(sizes);
  let ifd = 0;
  let stride = 1;
  for (const axis of order.slice(2)) {
    const n = sizeOf(axis, sizes);
    const v = coord[axis.toLowerCase() as keyof PlaneCoord];
    if (!Number.isInteger(v) || v < 0 || v >= n) throw new RangeError(`${axis} index ${v} is outside 0…${n - 1}`);
    ifd += v * stride;
    stride *= n;
  }
  return ifd;
}
