import { afterAll, beforeAll, describe, expect, test } from "vitest";
import { decodePlane } from "@/lib/tiff/decode";
import { fileSource } from "@/lib/tiff/file-source";
import {
  DIMENSION_ORDERS,
  ifdIndex,
  lengthToMicrometres,
  omeColourToHex,
  OmeXmlError,
  parseOmeXml,
  planeIndex,
  timeToSeconds,
  type OmeImage,
} from "@/lib/tiff/ome";
import { readTiffStructure } from "@/lib/tiff/structure";
import { makeTiffs, tempDir } from "@/tests/helpers/tiff-tools";

const tmp = tempDir("ome");
afterAll(() => tmp.remove());

async function readOmeFile(path: string) {
  const src = await fileSource(path);
  const structure = await readTiffStructure(src);
  const image = parseOmeXml(structure.ifds[0].imageDescription ?? "").images[0];
  return { src, structure, image };
}

describe("parseOmeXml on OME-XML written by tifffile", () => {
  let image: OmeImage;
  beforeAll(async () => {
    makeTiffs("stack", tmp.dir);
    const r = await readOmeFile(tmp.path("stack.ome.tif"));
    await r.src.close();
    image = r.image;
  });

  // Inputs given to tifffile in tests/fixtures/make_tiffs.py: axes TCZYX, T=2, C=2, Z=3, 37×50 pixels.
  test("reads the pixel sizes, dimension order, type and SignificantBits", () => {
    expect(image).toMatchObject({ sizeX: 50, sizeY: 37, sizeZ: 3, sizeC: 2, sizeT: 2, type: "uint16", significantBits: 12 });
    // tifffile maps axes TCZYX to DimensionOrder XYZCT (first letter after XY varies fastest).
    expect(image.dimensionOrder).toBe("XYZCT");
  });

  test("converts physical sizes given in µm, nm and mm to micrometres", () => {
    // 0.1625 µm, 162.5 nm and 0.0005 mm were written; SI prefixes: 1 nm = 10⁻³ µm, 1 mm = 10³ µm.
    expect(image.physicalSizeUm.x).toBeCloseTo(0.1625, 12);
    expect(image.physicalSizeUm.y).toBeCloseTo(0.1625, 12);
    expect(image.physicalSizeUm.z).toBeCloseTo(0.5, 12);
  });

  test("converts TimeIncrement given in ms to seconds", () => {
    expect(image.timeIncrementSeconds).toBeCloseTo(1.5, 12);
  });

  test("reads channel names, emission wavelengths in nm and colours as hex", () => {
    expect(image.channels.map((c) => c.name)).toEqual(["nuclei", "membrane"]);
    expect(image.channels[0].emissionWavelengthNm).toBeCloseTo(461, 9);
    expect(image.channels[1].emissionWavelengthNm).toBeCloseTo(510, 9);
    // -16776961 + 2³² = 0xFF0000FF (red, opaque); 16711935 = 0x00FF00FF (green, opaque).
    expect(image.channels.map((c) => [c.colour, c.alpha])).toEqual([
      ["#ff0000", 255],
      ["#00ff00", 255],
    ]);
  });

  test("reads each Plane's TheC/TheZ/TheT and DeltaT", () => {
    expect(image.planes).toHaveLength(12);
    expect(image.planes[7]).toEqual({ c: 0, z: 1, t: 1, deltaTSeconds: 1.75 });
    expect(image.tiffData).toEqual([{ ifd: 0, firstC: 0, firstZ: 0, firstT: 0, planeCount: 12 }]);
  });
});

describe("planeIndex", () => {
  let files: string[];
  beforeAll(() => {
    files = JSON.parse(makeTiffs("orders", tmp.dir)) as string[];
  });

  test("tifffile's files cover all six dimension orders", async () => {
    const orders = new Set<string>();
    for (const f of files) {
      const { src, image } = await readOmeFile(f);
      await src.close();
      orders.add(image.dimensionOrder);
    }
    expect([...orders].sort()).toEqual([...DIMENSION_ORDERS].sort());
  });

  test("maps each IFD to the (c, z, t) tifffile stored there, for all six orders", async () => {
    for (const f of files) {
      const { src, structure, image } = await readOmeFile(f);
      const sizes = { sizeZ: image.sizeZ, sizeC: image.sizeC, sizeT: image.sizeT };
      for (const ifd of structure.ifds) {
        const coord = planeIndex(image.dimensionOrder, sizes, ifd.index);
        // make_tiffs.py fills plane (c, z, t) with 1 + 100c + 10z + t, placed by tifffile from the array axes.
        const plane = await decodePlane(src, ifd.offset);
        expect(plane.data[0], `${image.dimensionOrder} IFD ${ifd.index}`).toBe(1 + 100 * coord.c + 10 * coord.z + coord.t);
        // tifffile also lists the planes in IFD order in Plane elements (numpy.unravel_index, order "F").
        const listed = image.planes[ifd.index];
        expect({ c: listed.c, z: listed.z, t: listed.t }).toEqual(coord);
      }
      await src.close();
    }
  });

  test("ifdIndex inverts planeIndex for every plane of every order", () => {
    const sizes = { sizeZ: 3, sizeC: 2, sizeT: 4 };
    for (const order of DIMENSION_ORDERS) {
      for (let i = 0; i < 24; i++) expect(ifdIndex(order, sizes, planeIndex(order, sizes, i))).toBe(i);
    }
  });

  test("rejects an IFD number beyond the stack and a coordinate beyond its size", () => {
    const sizes = { sizeZ: 3, sizeC: 2, sizeT: 4 };
    expect(() => planeIndex("XYZCT", sizes, 24)).toThrow(RangeError);
    expect(() => ifdIndex("XYZCT", sizes, { c: 2, z: 0, t: 0 })).toThrow(/C index 2 is outside 0…1/);
  });
});

describe("parseOmeXml errors", () => {
  test("rejects a description that is not OME-XML", () => {
    expect(() => parseOmeXml("exposure=100ms gain=2")).toThrow(new OmeXmlError("The image description is not OME-XML: it has no <OME> element"));
  });

  test("rejects OME-XML that is not well-formed", () => {
    expect(() => parseOmeXml('<OME><Image><Pixels SizeX="2"></Image></OME>')).toThrow(/not well-formed/);
  });

  test("names the missing attribute the plane index needs", () => {
    const xml = '<OME><Image ID="Image:0"><Pixels DimensionOrder="XYZCT" Type="uint16" SizeX="2" SizeY="2" SizeZ="1" SizeT="1"/></Image></OME>';
    expect(() => parseOmeXml(xml)).toThrow(/has no SizeC/);
  });

  test("rejects an unknown DimensionOrder", () => {
    const xml = '<OME><Image><Pixels DimensionOrder="XYQCT" Type="uint16" SizeX="2" SizeY="2" SizeZ="1" SizeC="1" SizeT="1"/></Image></OME>';
    expect(() => parseOmeXml(xml)).toThrow(/DimensionOrder "XYQCT" is not one of/);
  });

  test("accepts a namespace prefix on OME elements", () => {
    const xml =
      '<ome:OME xmlns:ome="http://www.openmicroscopy.org/Schemas/OME/2016-06"><ome:Image><ome:Pixels DimensionOrder="XYCZT" Type="uint8" SizeX="2" SizeY="2" SizeZ="1" SizeC="1" SizeT="1"/></ome:Image></ome:OME>';
    expect(parseOmeXml(xml).images[0].dimensionOrder).toBe("XYCZT");
  });
});

describe("unit and colour conversions", () => {
  test("defaults lengths to µm and times to s (OME-XML schema 2016-06, FACTS.md)", () => {
    expect(lengthToMicrometres(0.65)).toBe(0.65);
    expect(timeToSeconds(2)).toBe(2);
  });

  test("returns null for a length unit without a physical size", () => {
    expect(lengthToMicrometres(1, "pixel")).toBeNull();
  });

  test("reads -1 as opaque white and 0 as transparent black (signed 32-bit RGBA)", () => {
    expect(omeColourToHex(-1)).toEqual({ colour: "#ffffff", alpha: 255 });
    expect(omeColourToHex(0)).toEqual({ colour: "#000000", alpha: 0 });
  });
});
