// Upload → immutable storage → ingest → plane index and statistics, through the HTTP API against the
// real MariaDB, the local blob store and the ingest worker process. Reference numbers come from
// numpy on the same seeded data (tests/fixtures/make_tiffs.py; numpy.percentile's default is
// Hyndman & Fan 1996 type 7); the file itself is written by tifffile, an independent writer.
import { readFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loadStackFixture, PERCENTS, type StackFixture } from "../imaging/stack-fixture";
import { db } from "../helpers/db";
import { labWithMembers, type LabWithMembers } from "../helpers/http";
import { PYTHON, run, tempDir, tiffcp } from "../helpers/tiff-tools";
import { partOf, putPart, sha256, startUpload, uploadFile, waitForIngest } from "../helpers/uploads";

let fixture: StackFixture;
let bytes: Uint8Array;
let lab: LabWithMembers;
let datasetId: number;

beforeAll(async () => {
  fixture = loadStackFixture();
  bytes = new Uint8Array(readFileSync(fixture.omePath));
  lab = await labWithMembers();
  const reply = await uploadFile(lab.editor, lab.labId, bytes, { partSize: 4096, title: "Seeded OME stack" });
  expect(reply.status).toBe(201);
  datasetId = reply.body.datasetId;
});

afterAll(() => fixture?.remove());

describe("an OME-TIFF uploaded in parts", () => {
  it("is ingested with the dimensions, units and channels from its OME-XML", async () => {
    const { dataset } = await waitForIngest(lab.editor, datasetId);
    expect(dataset.status).toBe("ready");
    expect(dataset).toMatchObject({
      title: "Seeded OME stack",
      sizeC: 2,
      sizeZ: 3,
      sizeT: 2,
      planeCount: 12,
      width: fixture.width,
      height: fixture.height,
      bitsPerSample: 16,
      dimensionsFrom: "ome-xml",
      ceiling: 4095, // SignificantBits = 12 → 2^12 − 1 (FACTS.md)
      lossy: false,
    });
    // 0.1625 µm, 162.5 nm and 0.0005 mm in the file (OME schema 2016-06 units) → µm; 1500 ms → s.
    expect(dataset.physicalSizeX).toBeCloseTo(0.1625, 12);
    expect(dataset.physicalSizeY).toBeCloseTo(0.1625, 12);
    expect(dataset.physicalSizeZ).toBeCloseTo(0.5, 12);
    expect(dataset.timeIncrement).toBeCloseTo(1.5, 12);
    expect(dataset.channels.map((c: { name: string }) => c.name)).toEqual(["nuclei", "membrane"]);
    expect(dataset.channels.map((c: { emissionNm: number }) => c.emissionNm)).toEqual([461, 510]);
    expect(dataset.sha256).toBe(sha256(bytes));
    expect(dataset.sizeBytes).toBe(bytes.length);
  });

  it("stores exact per-plane statistics that match numpy on the same data", async () => {
    const reply = await lab.viewer.get(`/api/datasets/${datasetId}/planes`);
    expect(reply.status).toBe(200);
    const planes = reply.body.planes as any[];
    expect(planes).toHaveLength(12);
    // tifffile writes axes TCZYX, i.e. OME DimensionOrder XYZCT: z varies fastest, then c, then t.
    planes.forEach((plane, i) => {
      expect({ c: plane.c, z: plane.z, t: plane.t }).toEqual({ z: i % 3, c: Math.floor(i / 3) % 2, t: Math.floor(i / 6) });
      const ref = fixture.ref.planes[i];
      expect(plane.min).toBe(ref.min);
      expect(plane.max).toBe(ref.max);
      expect(plane.mean).toBeCloseTo(ref.mean, 9);
      expect(plane.sd).toBeCloseTo(ref.sd, 9);
      expect(plane.countAtZero).toBe(ref.countAtZero);
      expect(plane.countAtCeiling).toBe(ref.countAt4095);
      for (const p of [0.01, 0.1, 1, 50, 99, 99.9, 99.99]) {
        expect(plane.percentiles[String(p)]).toBeCloseTo(ref.percentiles[PERCENTS.indexOf(p)], 9);
      }
    });
    const offsets = planes.map((p) => p.ifdOffset);
    expect(new Set(offsets).size).toBe(12);
  });

  it("keeps per-channel statistics over the whole stack", async () => {
    const reply = await lab.viewer.get(`/api/datasets/${datasetId}`);
    const channel0 = reply.body.channelStats.find((s: { c: number }) => s.c === 0);
    const ref = fixture.ref.channel0;
    expect(channel0.min).toBe(ref.min);
    expect(channel0.max).toBe(ref.max);
    expect(channel0.mean).toBeCloseTo(ref.mean, 9);
    expect(channel0.percentiles["99.9"]).toBeCloseTo(ref.percentiles[PERCENTS.indexOf(99.9)], 9);
    expect(channel0.histogram.counts.reduce((a: number, b: number) => a + b, 0)).toBe(ref.count);
  });

  it("serves the original byte for byte with HTTP ranges (RFC 9110)", async () => {
    const whole = await fetch(`http://localhost:${process.env.APP_PORT}/api/datasets/${datasetId}/file`, { headers: { cookie: lab.viewer.cookieHeader() } });
    expect(whole.status).toBe(200);
    expect(whole.headers.get("accept-ranges")).toBe("bytes");
    expect(whole.headers.get("etag")).toBe(`"${sha256(bytes)}"`);
    expect(sha256(new Uint8Array(await whole.arrayBuffer()))).toBe(sha256(bytes));

    const ranged = async (range: string) =>
      fetch(`http://localhost:${process.env.APP_PORT}/api/datasets/${datasetId}/file`, { headers: { cookie: lab.viewer.cookieHeader(), range } });
    const head = await ranged("bytes=0-7");
    expect(head.status).toBe(206);
    expect(head.headers.get("content-range")).toBe(`bytes 0-7/${bytes.length}`);
    expect(new Uint8Array(await head.arrayBuffer())).toEqual(bytes.subarray(0, 8));
    const tail = await ranged("bytes=-5");
    expect(new Uint8Array(await tail.arrayBuffer())).toEqual(bytes.subarray(bytes.length - 5));
    const middle = await ranged("bytes=1000-1999");
    expect(new Uint8Array(await middle.arrayBuffer())).toEqual(bytes.subarray(1000, 2000));
    for (const bad of [`bytes=${bytes.length}-`, "bytes=9-3", "bytes=abc", "lines=0-1"]) {
      const reply = await ranged(bad);
      expect(reply.status, bad).toBe(416);
      expect(reply.headers.get("content-range")).toBe(`bytes */${bytes.length}`);
    }
  });

  it("verifies the stored original against the recorded SHA-256", async () => {
    const reply = await lab.viewer.post(`/api/datasets/${datasetId}/verify`, {});
    expect(reply.status).toBe(200);
    expect(reply.body).toMatchObject({ match: true, expected: sha256(bytes), actual: sha256(bytes) });
  });

  it("gives a PNG thumbnail", async () => {
    const reply = await fetch(`http://localhost:${process.env.APP_PORT}/api/datasets/${datasetId}/thumbnail`, { headers: { cookie: lab.viewer.cookieHeader() } });
    expect(reply.status).toBe(200);
    expect(reply.headers.get("content-type")).toBe("image/png");
    expect([...new Uint8Array(await reply.arrayBuffer()).subarray(0, 8)]).toEqual([137, 80, 78, 71, 13, 10, 26, 10]);
  });

  it("is listed in the library with search and paging", async () => {
    const all = await lab.viewer.get(`/api/labs/${lab.labId}/datasets`);
    expect(all.status).toBe(200);
    expect(all.body.datasets.map((d: { id: number }) => d.id)).toContain(datasetId);
    const found = await lab.viewer.get(`/api/labs/${lab.labId}/datasets?q=Seeded`);
    expect(found.body.total).toBe(1);
    const none = await lab.viewer.get(`/api/labs/${lab.labId}/datasets?q=no-such-title`);
    expect(none.body.total).toBe(0);
    const bad = await lab.viewer.get(`/api/labs/${lab.labId}/datasets?pageSize=1000`);
    expect(bad.status).toBe(400);
  });

  it("lets only lab members see it", async () => {
    expect((await lab.outsider.get(`/api/datasets/${datasetId}`)).status).toBe(404);
    expect((await lab.outsider.get(`/api/datasets/${datasetId}/file`)).status).toBe(404);
    expect((await lab.viewer.patch(`/api/datasets/${datasetId}`, { title: "Renamed by a viewer" })).status).toBe(403);
    expect((await lab.viewer.post(`/api/labs/${lab.labId}/uploads`, { fileName: "x.tif", sizeBytes: 100 })).status).toBe(403);
  });
});

describe("upload faults", () => {
  it("refuses a part of the wrong length, out of order, or changed on resend", async () => {
    const upload = await startUpload(lab.editor, lab.labId, bytes, { partSize: 4096 });
    expect((await putPart(lab.editor, lab.labId, upload.id, 1, bytes.subarray(0, 100))).status).toBe(400);
    expect((await putPart(lab.editor, lab.labId, upload.id, 2, partOf(bytes, 4096, 2))).status).toBe(409);
    expect((await putPart(lab.editor, lab.labId, upload.id, 1, partOf(bytes, 4096, 1))).status).toBe(200);
    // A retry with the same bytes is fine; different bytes under the same number are not.
    expect((await putPart(lab.editor, lab.labId, upload.id, 1, partOf(bytes, 4096, 1))).status).toBe(200);
    const changed = partOf(bytes, 4096, 1).slice();
    changed[10] ^= 0xff;
    expect((await putPart(lab.editor, lab.labId, upload.id, 1, changed)).status).toBe(409);
    const state = await lab.editor.get(`/api/labs/${lab.labId}/uploads/${upload.id}`);
    expect(state.body.upload.receivedParts).toEqual([1]);
    // Another member cannot see or continue this person's upload.
    expect((await lab.owner.get(`/api/labs/${lab.labId}/uploads/${upload.id}`)).status).toBe(404);
  });

  it("resumes after an interruption from the last stored part", async () => {
    const upload = await startUpload(lab.editor, lab.labId, bytes, { partSize: 4096, title: "Resumed upload" });
    for (let n = 1; n <= 2; n++) await putPart(lab.editor, lab.labId, upload.id, n, partOf(bytes, 4096, n));
    // …the page reloads; the client asks which parts the server has and goes on from there.
    const state = await lab.editor.get(`/api/labs/${lab.labId}/uploads/${upload.id}`);
    const next = Math.max(0, ...state.body.upload.receivedParts) + 1;
    expect(next).toBe(3);
    for (let n = next; n <= upload.partCount; n++) expect((await putPart(lab.editor, lab.labId, upload.id, n, partOf(bytes, 4096, n))).status).toBe(200);
    const done = await lab.editor.post(`/api/labs/${lab.labId}/uploads/${upload.id}/complete`, { sha256: sha256(bytes) });
    expect(done.status).toBe(201);
    expect((await waitForIngest(lab.editor, done.body.datasetId)).dataset.status).toBe("ready");
  });

  it("stores nothing when the whole file's SHA-256 does not match", async () => {
    const before = await db().Dataset.count({ where: { labId: lab.labId } });
    const upload = await startUpload(lab.editor, lab.labId, bytes, { partSize: 8192 });
    for (let n = 1; n <= upload.partCount; n++) await putPart(lab.editor, lab.labId, upload.id, n, partOf(bytes, 8192, n));
    const reply = await lab.editor.post(`/api/labs/${lab.labId}/uploads/${upload.id}/complete`, { sha256: "0".repeat(64) });
    expect(reply.status).toBe(422);
    expect(reply.body.error.message).toMatch(/SHA-256/);
    expect(await db().Dataset.count({ where: { labId: lab.labId } })).toBe(before);
    const state = await lab.editor.get(`/api/labs/${lab.labId}/uploads/${upload.id}`);
    expect(state.body.upload.status).toBe("failed");
  });

  it("refuses to complete before every part has arrived", async () => {
    const upload = await startUpload(lab.editor, lab.labId, bytes, { partSize: 4096 });
    await putPart(lab.editor, lab.labId, upload.id, 1, partOf(bytes, 4096, 1));
    const reply = await lab.editor.post(`/api/labs/${lab.labId}/uploads/${upload.id}/complete`, { sha256: sha256(bytes) });
    expect(reply.status).toBe(409);
  });
});

describe("bad files", () => {
  it("marks a file that is not a TIFF as failed, with the reason", async () => {
    const junk = new TextEncoder().encode("These are lab notes, not an image.\n".repeat(20));
    const reply = await uploadFile(lab.editor, lab.labId, junk, { fileName: "notes.tif" });
    expect(reply.status).toBe(201);
    const { dataset } = await waitForIngest(lab.editor, reply.body.datasetId);
    expect(dataset.status).toBe("failed");
    expect(dataset.failureReason).toMatch(/TIFF/i);
    expect((await lab.editor.get(`/api/datasets/${reply.body.datasetId}/planes`)).body.planes).toEqual([]);
  });

  it("marks a truncated file as failed", async () => {
    const reply = await uploadFile(lab.editor, lab.labId, bytes.subarray(0, Math.floor(bytes.length * 0.6)), { fileName: "cut.ome.tif" });
    const { dataset } = await waitForIngest(lab.editor, reply.body.datasetId);
    expect(dataset.status).toBe("failed");
    expect(dataset.failureReason).toMatch(/end|truncat|past/i);
  });
});

describe("lossy and oversized files", () => {
  it("stores a JPEG-compressed TIFF but flags it lossy and does not read its planes", async () => {
    const tmp = tempDir("jpeg");
    try {
      const eight = tmp.path("eight.tif");
      run(PYTHON, ["-c", `import numpy as np, tifffile; tifffile.imwrite(${JSON.stringify(eight)}, (np.arange(64*48).reshape(48,64) % 251).astype(np.uint8), photometric="minisblack", metadata=None)`]);
      // libtiff's JPEG codec (TIFF 6.0 compression 7): lossy, so the counts are no longer the camera's.
      const jpeg = tiffcp(eight, tmp.path("jpeg.tif"), ["-c", "jpeg"]);
      const reply = await uploadFile(lab.editor, lab.labId, new Uint8Array(readFileSync(jpeg)), { fileName: "lossy.tif", dimensions: { sizeC: 1, sizeZ: 1, sizeT: 1, order: "XYCZT" } });
      expect(reply.status).toBe(201);
      const { dataset } = await waitForIngest(lab.editor, reply.body.datasetId);
      expect(dataset.lossy).toBe(true);
      expect(dataset.failureReason).toMatch(/Lossy .*not for quantification/);
      const listed = await lab.viewer.get(`/api/labs/${lab.labId}/datasets?q=lossy`);
      expect(listed.body.datasets[0].lossy).toBe(true);
    } finally {
      tmp.remove();
    }
  });

  it("refuses an upload above the size limit before any byte is sent", async () => {
    const reply = await lab.editor.post(`/api/labs/${lab.labId}/uploads`, { fileName: "huge.tif", sizeBytes: 60 * 1024 ** 3 });
    expect(reply.status).toBe(413);
    expect(reply.body.error.fields.sizeBytes).toBeDefined();
  });
});

describe("the bin", () => {
  it("moves a deleted dataset to the bin, where an editor can restore it", async () => {
    const reply = await uploadFile(lab.editor, lab.labId, bytes, { title: "Binned stack" });
    const id = reply.body.datasetId;
    await waitForIngest(lab.editor, id);
    expect((await lab.viewer.delete(`/api/datasets/${id}`)).status).toBe(403);
    const deleted = await lab.editor.delete(`/api/datasets/${id}`);
    expect(deleted.status).toBe(200);
    expect(deleted.body.dataset.purgeAt).not.toBeNull();
    const listed = await lab.viewer.get(`/api/labs/${lab.labId}/datasets?q=Binned`);
    expect(listed.body.total).toBe(0);
    const bin = await lab.viewer.get(`/api/labs/${lab.labId}/datasets?bin=1&q=Binned`);
    expect(bin.body.total).toBe(1);
    expect((await lab.editor.post(`/api/datasets/${id}/restore`, {})).status).toBe(200);
    expect((await lab.viewer.get(`/api/labs/${lab.labId}/datasets?q=Binned`)).body.total).toBe(1);
  });
});
