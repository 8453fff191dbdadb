"use client";

import { useEffect, useMemo, useRef, useState } from "react";
import { CVD_WARNING_THRESHOLD, minPairDistance } from "@/lib/imaging/colour-difference";
import { findTable, safeChannelColours, singleHueTable } from "@/lib/imaging/colour-tables";
import type { CvdKind } from "@/lib/imaging/cvd";
import {
  buildFigureSidecar,
  disclosureText,
  FIGURE_SCALES,
  figureFits,
  figureLayout,
  formatLength,
  legendEntries,
  niceScaleBar,
  sourceText,
  timeStampText,
  upscaleNearest,
  type FigureChannel,
  type FigureLayout,
  type FigureScale,
} from "@/lib/imaging/figure";
import { withTextChunk } from "@/lib/imaging/png-text";
import { FIGURE_SIDECAR_KEYWORD, figureFileName, type FigureSidecar } from "@/lib/schemas/figure-sidecar";
import type { BenchRender, ClipMarkSettings } from "@/workers/bench-api";

export interface FigureDialogProps {
  /** The bench's latest render: the composite RGBA of the plane at native resolution. */
  render: BenchRender | null;
  dataset: {
    id: number;
    title: string;
    sha256: string;
    width: number | null;
    height: number | null;
    sizeC: number | null;
    sizeZ: number | null;
    sizeT: number | null;
    ceiling: number | null;
    physicalSizeX: number | null;
    timeIncrement: number | null;
  };
  channels: readonly FigureChannel[];
  blend: "add" | "max";
  z: number;
  t: number;
  clipMarks: ClipMarkSettings | null;
  cvd: CvdKind | null;
  /** The flat/dark pair applied to the display, or null when correction is off. */
  correction: { flatId: number | null; darkId: number | null } | null;
  /** Gives every channel (by position) the colour at the same index: the bench re-renders. */
  onUseColours: (colours: string[]) => void;
  onClose: () => void;
}

const FOCUSABLE = "button:not([disabled]), input:not([disabled]), select:not([disabled]), a[href], [tabindex]:not([tabindex='-1'])";

function defaultName(title: string, z: number, t: number): string {
  const base = title.replace(/[\\/:*?"<>|\u0000-\u001f]+/g, "-").trim() || "figure";
  return `${base.slice(0, 100)}-z${z + 1}-t${t + 1}`;
}

/** Saves a blob through a temporary link inside `container` (the page behind a modal dialog is inert). */
function download(blob: Blob, name: string, container: HTMLElement): void {
  const url = URL.createObjectURL(blob);
  const a = document.createElement("a");
  a.href = url;
  a.download = name;
  a.hidden = true;
  container.append(a);
  a.click();
  a.remove();
  // Revoked later: Chromium reads the blob after the click returns.
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}

/** A swatch of the channel's colour table, black (left) to full colour (right), with a hairline frame. */
function drawSwatch(ctx: CanvasRenderingContext2D, channel: FigureChannel, rect: FigureLayout["legend"][number]["swatch"], frame: string) {
  const table = (channel.tableId && findTable(channel.tableId)) || singleHueTable(channel.colour);
  for (let i = 0; i < rect.width; i++) {
    const k = rect.width > 1 ? Math.round((i * 255) / (rect.width - 1)) : 255;
    ctx.fillStyle = `rgb(${table.rgb[3 * k]}, ${table.rgb[3 * k + 1]}, ${table.rgb[3 * k + 2]})`;
    ctx.fillRect(rect.x + i, rect.y, 1, rect.height);
  }
  ctx.strokeStyle = frame;
  ctx.lineWidth = 1;
  ctx.strokeRect(rect.x - 0.5, rect.y - 0.5, rect.width + 1, rect.height + 1);
}

/**
 * Export of the bench's current view as a PNG figure with an optional scale bar, legend and time
 * stamp drawn below the image (never over its pixels), the disclosure line, and a JSON sidecar (also
 * embedded in the PNG) that lets anyone reproduce it. A native modal dialog: the page behind is
 * inert, Escape closes, Tab stays inside.
 */
export function FigureDialog(props: FigureDialogProps) {
  const { render, dataset, channels, blend, z, t, clipMarks, cvd, correction, onUseColours, onClose } = props;
  const dialog = useRef<HTMLDialogElement>(null);
  const canvas = useRef<HTMLCanvasElement>(null);
  const width = dataset.width ?? render?.width ?? 1;
  const height = dataset.height ?? render?.height ?? 1;
  const sizeT = dataset.sizeT ?? 1;
  const pixelSize = dataset.physicalSizeX;
  const interval = dataset.timeIncrement;

  const [scale, setScale] = useState<FigureScale>(1);
  const [withScaleBar, setWithScaleBar] = useState(pixelSize != null);
  const [withLegend, setWithLegend] = useState(true);
  const [withTime, setWithTime] = useState(interval != null && sizeT > 1);
  const [background, setBackground] = useState<"white" | "black">("white");
  const [fileName, setFileName] = useState(() => defaultName(dataset.title, z, t));
  const [composed, setComposed] = useState<{ layout: FigureLayout; sidecar: FigureSidecar } | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);

  useEffect(() => {
    const d = dialog.current;
    const opener = document.activeElement as HTMLElement | null;
    if (d && !d.open) d.showModal();
    // Start on the first option rather than on the close button.
    d?.querySelector<HTMLElement>("input")?.focus();
    return () => {
      if (d?.open) d.close();
      opener?.focus?.();
    };
  }, []);

  // The render must belong to the mapping shown here: after a change (e.g. the safe colours) the
  // bench renders again, and until that render arrives nothing is composed or exported.
  const mappingKey = JSON.stringify({ channels, blend, z, t, clipMarks, cvd, correction });
  const [renderedFor, setRenderedFor] = useState({ render, key: mappingKey });
  if (renderedFor.render !== render) setRenderedFor({ render, key: mappingKey });
  const pending = !render || renderedFor.key !== mappingKey || render.z !== z || render.t !== t;

  const corrected = correction !== null;
  const scaleBar = useMemo(() => (withScaleBar && pixelSize ? niceScaleBar(pixelSize, width, scale) : null), [withScaleBar, pixelSize, width, scale]);
  const timeStamp = withTime && interval != null ? timeStampText(t, sizeT, interval) : null;
  const legend = useMemo(() => legendEntries(channels, { corrected }), [channels, corrected]);
  const disclosure = disclosureText({ channels, blend, cvd, correction: corrected, clipMarks });
  const name = figureFileName.safeParse(fileName);

  // The same rule as the bench: hue and chroma only (lightness follows the signal in an overlay).
  const colourCheck = useMemo(() => {
    const drawn = channels.filter((c) => c.visible && !c.tableId);
    if (drawn.length < 2) return null;
    const result = minPairDistance(drawn.map((c) => c.colour), { lightness: "ignore" });
    if (result.distance >= CVD_WARNING_THRESHOLD || !result.pair) return null;
    const safe = safeChannelColours(channels.length);
    const safeDrawn = channels.map((c, i) => ({ c, colour: safe[i] })).filter(({ c }) => c.visible && !c.tableId);
    const safeOk = minPairDistance(safeDrawn.map((x) => x.colour), { lightness: "ignore" }).distance >= CVD_WARNING_THRESHOLD;
    const [a, b] = result.pair;
    return {
      message: `${drawn[a].name} and ${drawn[b].name} are hard to tell apart${result.vision === "normal" ? "" : ` with ${result.vision}`} (ΔE00 ${result.distance.toFixed(1)} < ${CVD_WARNING_THRESHOLD}).`,
      safe,
      safeOk,
    };
  }, [channels]);

  // Composes the figure on the preview canvas; what is shown is exactly what is downloaded.
  useEffect(() => {
    const c = canvas.current;
    const d = dialog.current;
    if (!c || !d || pending || !render) return;
    let stale = false;
    const family = getComputedStyle(d).fontFamily || "sans-serif";
    const compose = async () => {
      await document.fonts.load(`16px ${family}`).catch(() => undefined);
      if (stale) return;
      const ctx = c.getContext("2d");
      if (!ctx) throw new Error("This browser cannot draw the figure (no 2D canvas).");
      const measure = (text: string, px: number) => {
        ctx.font = `${px}px ${family}`;
        return ctx.measureText(text).width;
      };
      const layout = figureLayout({
        imageWidth: render.width,
        imageHeight: render.height,
        scale,
        scaleBar: scaleBar ? { px: scaleBar.px, label: formatLength(scaleBar.um) } : null,
        timeStamp,
        legend: withLegend ? legend.map((e) => e.text) : [],
        lines: [disclosure, sourceText({ title: dataset.title, sha256: dataset.sha256, sizeZ: dataset.sizeZ ?? 1, sizeT }, z, t)],
        measure,
      });
      c.width = layout.width;
      c.height = layout.height;
      const ink = background === "white" ? "#111111" : "#eeeeee";
      ctx.fillStyle = background === "white" ? "#ffffff" : "#000000";
      ctx.fillRect(0, 0, layout.width, layout.height);
      // The image bytes go in with putImageData (no filtering, no blending: opaque pixels land as
      // given), enlarged by whole pixels beforehand; smoothing is off for everything else drawn.
      ctx.imageSmoothingEnabled = false;
      const pixels = upscaleNearest(render.rgba, render.width, render.height, scale);
      ctx.putImageData(new ImageData(pixels, layout.image.width, layout.image.height), layout.image.x, layout.image.y);
      ctx.fillStyle = ink;
      ctx.textBaseline = "top";
      ctx.font = `${layout.fontPx}px ${family}`;
      if (layout.scaleBar) {
        ctx.fillRect(layout.scaleBar.bar.x, layout.scaleBar.bar.y, layout.scaleBar.bar.width, layout.scaleBar.bar.height);
        ctx.fillText(layout.scaleBar.label.text, layout.scaleBar.label.x, layout.scaleBar.label.y);
      }
      if (layout.timeStamp) ctx.fillText(layout.timeStamp.text, layout.timeStamp.x, layout.timeStamp.y);
      layout.legend.forEach((row, i) => {
        const entry = legend[i];
        const channel = channels.find((ch) => ch.c === entry.c)!;
        drawSwatch(ctx, channel, row.swatch, background === "white" ? "#9e9e9e" : "#5c5c5c");
        ctx.fillStyle = ink;
        for (const line of row.text) ctx.fillText(line.text, line.x, line.y);
      });
      for (const line of layout.text) ctx.fillText(line.text, line.x, line.y);
      const sidecar = buildFigureSidecar({
        dataset: {
          id: dataset.id,
          title: dataset.title,
          sha256: dataset.sha256,
          width: render.width,
          height: render.height,
          sizeC: dataset.sizeC ?? channels.length,
          sizeZ: dataset.sizeZ ?? 1,
          sizeT,
          ceiling: dataset.ceiling,
          physicalSizeX: pixelSize,
          timeIncrement: interval,
        },
        z,
        t,
        channels,
        blend,
        clipMarks,
        cvd,
        correction: correction && correction.flatId !== null && correction.darkId !== null ? { flatDatasetId: correction.flatId, darkDatasetId: correction.darkId } : null,
        scale,
        scaleBar: scaleBar ? { um: scaleBar.um, px: scaleBar.px } : null,
        timeStamp,
        legend: withLegend,
        background,
        layout,
        exportedAt: new Date(),
        // Set from package.json at build time (next.config.ts), so the dependency list stays out of the bundle.
        appVersion: process.env.NEXT_PUBLIC_APP_VERSION ?? "unknown",
      });
      if (!stale) {
        setComposed({ layout, sidecar });
        setError(null);
      }
    };
    compose().catch((e: unknown) => {
      if (!stale) setError(e instanceof Error ? e.message : String(e));
    });
    return () => {
      stale = true;
    };
    // The mapping props are new objects on every bench render; mappingKey changes only when their
    // content does, so the figure is not composed again for nothing.
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [render, pending, mappingKey, scale, scaleBar, timeStamp, withLegend, background, legend, disclosure, dataset]);

  const ready = composed !== null && !pending && !busy && name.success;

  const save = async (what: { png: boolean; json: boolean }) => {
    const c = canvas.current;
    const d = dialog.current;
    if (!c || !d || !composed || !name.success) return;
    setBusy(true);
    setError(null);
    try {
      const json = JSON.stringify(composed.sidecar, null, 2);
      if (what.png) {
        const blob = await new Promise<Blob | null>((resolve) => c.toBlob(resolve, "image/png"));
        if (!blob) throw new Error("The browser could not encode the PNG (the figure may be too large).");
        const png = withTextChunk(new Uint8Array(await blob.arrayBuffer()), FIGURE_SIDECAR_KEYWORD, JSON.stringify(composed.sidecar));
        download(new Blob([png as Uint8Array<ArrayBuffer>], { type: "image/png" }), `${name.data}.png`, d);
      }
      if (what.json) download(new Blob([json], { type: "application/json" }), `${name.data}.json`, d);
    } catch (e) {
      setError(e instanceof Error ? e.message : String(e));
    } finally {
      setBusy(false);
    }
  };

  // Keys stay inside the dialog (the bench behind it moves through t and z on arrow keys), and Tab
  // wraps from the last control to the first and back.
  const onKeyDown = (e: React.KeyboardEvent<HTMLDialogElement>) => {
    e.stopPropagation();
    if (e.key !== "Tab" || !dialog.current) return;
    const items = [...dialog.current.querySelectorAll<HTMLElement>(FOCUSABLE)];
    if (!items.length) return;
    const first = items[0];
    const last = items[items.length - 1];
    if (e.shiftKey && document.activeElement === first) {
      e.preventDefault();
      last.focus();
    } else if (!e.shiftKey && document.activeElement === last) {
      e.preventDefault();
      first.focus();
    }
  };

  const checkbox = "accent-flux-500";
  const optionRow = "flex items-center gap-2";
  return (
    <dialog
      ref={dialog}
      aria-labelledby="figure-dialog-title"
      onKeyDown={onKeyDown}
      onCancel={(e) => {
        e.preventDefault();
        onClose();
      }}
      // Only a close the person caused: the close() in the effect's cleanup also fires this event
      // (later, as a task), e.g. when React's development mode mounts the dialog twice.
      onClose={() => {
        if (!dialog.current?.open) onClose();
      }}
      className="m-auto max-h-[92vh] w-[min(64rem,96vw)] overflow-y-auto rounded border border-graphite-600 bg-graphite-900 p-0 text-sm text-graphite-100 backdrop:bg-black/60"
    >
      <div className="flex items-center justify-between border-b border-graphite-700 px-4 py-2">
        <h2 id="figure-dialog-title" className="font-semibold text-white">
          Export figure
        </h2>
        <button type="button" onClick={onClose} className="rounded px-2 py-0.5 text-graphite-200 hover:bg-graphite-700 hover:text-white" aria-label="Close figure export">
          ✕
        </button>
      </div>
      <div className="grid gap-4 p-4 md:grid-cols-[17rem_1fr]">
        <div className="space-y-3">
          <fieldset className="space-y-1">
            <legend className="mb-1 text-xs font-semibold uppercase tracking-wide text-graphite-200">Scale</legend>
            {FIGURE_SCALES.map((k) => {
              const fits = figureFits(width, height, k, 400);
              return (
                <label key={k} className={optionRow} title={fits ? undefined : "Too large to build in the browser"}>
                  <input type="radio" name="figure-scale" value={k} checked={scale === k} disabled={!fits} onChange={() => setScale(k)} className={checkbox} />
                  <span>
                    {k}× {k === 1 ? "native" : ""}{" "}
                    <span className="num text-graphite-300">
                      ({width * k} × {height * k} px image)
                    </span>
                  </span>
                </label>
              );
            })}
            <p className="text-[11px] text-graphite-300">1× gives one PNG pixel per image pixel; larger scales repeat each pixel as a block (nearest neighbour), so no new colours appear.</p>
          </fieldset>
          <fieldset className="space-y-1">
            <legend className="mb-1 text-xs font-semibold uppercase tracking-wide text-graphite-200">Below the image</legend>
            <label className={optionRow}>
              <input type="checkbox" checked={withScaleBar && pixelSize != null} disabled={pixelSize == null} onChange={(e) => setWithScaleBar(e.target.checked)} className={checkbox} />
              Scale bar
              {pixelSize == null ? <span className="text-[11px] text-graphite-300">(the file gives no pixel size)</span> : scaleBar && <span className="num text-graphite-300">{formatLength(scaleBar.um)}</span>}
            </label>
            <label className={optionRow}>
              <input type="checkbox" checked={withLegend} onChange={(e) => setWithLegend(e.target.checked)} className={checkbox} />
              Legend
            </label>
            <label className={optionRow}>
              <input type="checkbox" checked={withTime && interval != null} disabled={interval == null} onChange={(e) => setWithTime(e.target.checked)} className={checkbox} />
              Time stamp
              {interval == null && <span className="text-[11px] text-graphite-300">(the file gives no time interval)</span>}
            </label>
            <label className={optionRow}>
              Background
              <select value={background} onChange={(e) => setBackground(e.target.value as "white" | "black")} className="rounded border border-graphite-600 bg-graphite-950 px-1 py-0.5 text-xs">
                <option value="white">white (print)</option>
                <option value="black">black (slides)</option>
              </select>
            </label>
          </fieldset>
          <label className="block space-y-1">
            <span className="text-xs font-semibold uppercase tracking-wide text-graphite-200">File name</span>
            <span className="flex items-center gap-1">
              <input
                type="text"
                value={fileName}
                onChange={(e) => setFileName(e.target.value)}
                aria-invalid={!name.success}
                aria-describedby="figure-file-name-help"
                className="min-w-0 flex-1 rounded border border-graphite-600 bg-graphite-950 px-1.5 py-0.5"
              />
              <span className="text-graphite-300">.png / .json</span>
            </span>
            <span id="figure-file-name-help" className={`block text-[11px] ${name.success ? "text-graphite-300" : "text-[#ffb4ab]"}`}>
              {name.success ? "The sidecar gets the same name." : name.error.issues[0]?.message}
            </span>
          </label>
          {colourCheck && (
            <div role="alert" className="rounded border border-[#ffd180]/50 bg-graphite-800 p-2 text-xs text-[#ffd180]">
              <p>Not colour-blind safe: {colourCheck.message}</p>
              {colourCheck.safeOk ? (
                <>
                  <p className="mt-1 flex flex-wrap items-center gap-1 text-graphite-100">
                    Safe set:
                    {channels.map((ch, i) => (
                      <span key={ch.c} className="inline-flex items-center gap-1">
                        <span className="inline-block h-2.5 w-2.5 rounded-sm" style={{ background: colourCheck.safe[i] }} />
                        <span className="num">
                          {ch.name} {colourCheck.safe[i]}
                        </span>
                      </span>
                    ))}
                  </p>
                  <button type="button" disabled={pending} onClick={() => onUseColours(colourCheck.safe)} className="mt-1 rounded bg-graphite-700 px-2 py-0.5 text-white hover:bg-graphite-600 disabled:opacity-50">
                    Use colour-blind-safe colours
                  </button>
                </>
              ) : (
                <p className="mt-1 text-graphite-100">No built-in safe set for this many channels: hide some channels or use colour tables.</p>
              )}
            </div>
          )}
        </div>
        <div className="min-w-0 space-y-2">
          <div className="grid min-h-48 place-items-center rounded border border-graphite-700 bg-graphite-800 p-2">
            <canvas
              ref={canvas}
              role="img"
              aria-label={composed ? `Figure preview, ${composed.layout.width} × ${composed.layout.height} px: ${composed.sidecar.disclosure}` : "Figure preview"}
              className="max-h-[55vh] max-w-full object-contain"
              style={{ imageRendering: "pixelated" }}
            />
          </div>
          <p role="status" className="num text-xs text-graphite-200">
            {pending
              ? "Waiting for the bench to draw the current mapping…"
              : composed
                ? `${composed.layout.width} × ${composed.layout.height} px; image ${composed.layout.image.width} × ${composed.layout.image.height} px at (${composed.layout.image.x}, ${composed.layout.image.y}).`
                : "Composing…"}
          </p>
          <p className="text-xs text-graphite-200">
            <span className="font-semibold text-graphite-100">Printed under the image: </span>
            <span data-testid="figure-disclosure">{disclosure}</span>
          </p>
          <p className="text-[11px] text-graphite-300">
            The sidecar (JSON, also embedded in the PNG) records the dataset&apos;s SHA-256, the plane, every channel&apos;s mapping, blend, marks, colour-vision preview and correction, so the figure can be made again from the stored file.
          </p>
          {error && (
            <p role="alert" className="rounded bg-fault-700 px-2 py-1 text-xs text-white">
              {error}
            </p>
          )}
          <div className="flex flex-wrap justify-end gap-2 pt-1">
            <button type="button" onClick={onClose} className="rounded border border-graphite-600 px-3 py-1 text-graphite-100 hover:bg-graphite-700">
              Close
            </button>
            <button type="button" disabled={!ready} onClick={() => void save({ png: false, json: true })} className="rounded border border-graphite-600 px-3 py-1 text-white hover:bg-graphite-700 disabled:opacity-50">
              Download sidecar JSON
            </button>
            <button type="button" disabled={!ready} onClick={() => void save({ png: true, json: false })} className="rounded border border-graphite-600 px-3 py-1 text-white hover:bg-graphite-700 disabled:opacity-50">
              Download PNG
            </button>
            <button type="button" disabled={!ready} onClick={() => void save({ png: true, json: true })} className="rounded bg-flux-700 px-3 py-1 font-medium text-white hover:bg-flux-600 disabled:opacity-50">
              Download both
            </button>
          </div>
        </div>
      </div>
    </dialog>
  );
}
