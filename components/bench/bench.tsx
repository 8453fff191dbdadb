"use client";

import { useQuery } from "@tanstack/react-query";
import { get as idbGet, set as idbSet } from "idb-keyval";
import Link from "next/link";
import { useSearchParams } from "next/navigation";
import { useCallback, useEffect, useMemo, useRef, useState } from "react";
import { api, ApiError } from "@/lib/client/api";
import { useDataset } from "@/lib/client/datasets";
import type { LinkViewData } from "@/lib/client/links";
import { useBenchWorker } from "@/lib/client/use-bench-worker";
import { useBenchColourTables } from "@/lib/client/colour-tables";
import { chooseMarkColours } from "@/lib/imaging/clip-marks";
import { CVD_WARNING_THRESHOLD, minPairDistance } from "@/lib/imaging/colour-difference";
import { findTable, safeChannelColours, singleHueTable, toHex } from "@/lib/imaging/colour-tables";
import type { CvdKind } from "@/lib/imaging/cvd";
import type { PresetChannel, ViewStateOut } from "@/lib/schemas/preset";
import { matchPresetChannels, useCreatePreset, usePresets } from "@/lib/client/presets";
import { can } from "@/lib/permissions";
import { hexToRgb } from "@/lib/imaging/palettes";
import type { BenchPlaneRef, BenchRender, RawValue } from "@/workers/bench-api";
import { ChannelCard, type ChannelState } from "./channel-card";
import { CorrectionPanel, type CorrectionChoice } from "./correction-panel";
import { PhotoelectronReadout } from "@/components/detectors/photoelectron-readout";
import { FigureDialog } from "./figure-dialog";
import { HelpOverlay } from "./help-overlay";
import { SavedViewsMenu, SaveAsMineButton, ShareDialog } from "./share-dialog";
import { Viewport, type Camera, type PlaneCanvas, type ViewportHandle } from "./viewport";
// Regions (regions panel + overlay): not offered through view links.
import { RegionOverlay, useRegionsController } from "./region-overlay";
import { RegionsPanel } from "./regions-panel";

// Default Fit percentiles (percent of pixels below the black / white point); editable on the bench.
const FIT_LOW = 0.1;
const FIT_HIGH = 99.9;
// Percentiles stored at ingest for the whole stack (lib/imaging/percentile.ts STANDARD_PERCENTILES).
const STACK_PERCENTILES = ["0.01", "0.1", "1", "50", "99", "99.9", "99.99"];

function formatTime(seconds: number): string {
  const h = Math.floor(seconds / 3600);
  const m = Math.floor((seconds % 3600) / 60);
  const s = seconds % 60;
  return `${String(h).padStart(2, "0")}:${String(m).padStart(2, "0")}:${s.toFixed(s % 1 ? 1 : 0).padStart(2, "0")}`;
}

/** A view link opened at /v/[token]: the bench is read-only, starts from the snapshot and saves nothing. */
export interface BenchLink {
  token: string;
  data: LinkViewData;
}

export function Bench({ labId, datasetId, link }: { labId: number; datasetId: number; link?: BenchLink }) {
  const search = useSearchParams();
  const memberDataset = useDataset(datasetId, !link);
  // Through a link the dataset comes with the snapshot (GET /api/v/[token]); nothing else is asked.
  const datasetQuery = link
    ? { data: { dataset: link.data.dataset, channelStats: link.data.channelStats, role: undefined }, isPending: false as const, isError: false as const, error: null }
    : memberDataset;
  const apiBase = link ? `/api/v/${link.token}` : `/api/datasets/${datasetId}`;
  const planesQuery = useQuery({
    queryKey: link ? ["links", link.token, "planes"] : ["datasets", datasetId, "planes"],
    queryFn: async () => (await api<{ planes: (BenchPlaneRef & Record<string, unknown>)[] }>(`${apiBase}/planes`)).planes,
    enabled: datasetQuery.data?.dataset.status === "ready",
  });
  const bench = useBenchWorker();
  const dataset = datasetQuery.data?.dataset;
  const sizeZ = dataset?.sizeZ ?? 1;
  const sizeT = dataset?.sizeT ?? 1;
  const ceiling = dataset?.ceiling ?? 65535;

  const [z, setZ] = useState(() => Number(search.get("z") ?? 0) || 0);
  const [t, setT] = useState(() => Number(search.get("t") ?? 0) || 0);
  const [channels, setChannels] = useState<ChannelState[] | null>(null);
  const [composite, setComposite] = useState<"add" | "max">("add");
  const [marks, setMarks] = useState(false);
  const [lowMarkMode, setLowMarkMode] = useState<"black" | "percent">("black");
  const [lowMarkPercent, setLowMarkPercent] = useState(0.1);
  const [highMarkPercent, setHighMarkPercent] = useState(0);
  const [fitLow, setFitLow] = useState(FIT_LOW);
  const [fitHigh, setFitHigh] = useState(FIT_HIGH);
  const [fitScope, setFitScope] = useState<"plane" | "stack" | "visible">("plane");
  const [showScaleBar, setShowScaleBar] = useState(true);
  const [showTime, setShowTime] = useState(false);
  const [correction, setCorrection] = useState<CorrectionChoice>({ flatId: null, darkId: null, on: false });
  // The outcome of loading a flat/dark pair, keyed by the pair so a newer choice never shows an older result.
  const [correctionResult, setCorrectionResult] = useState<{ pair: string; ok: boolean; message: string | null } | null>(null);
  const correctionPair = correction.flatId !== null && correction.darkId !== null ? `${correction.flatId}:${correction.darkId}` : null;
  const correctionReady = Boolean(correctionPair && correctionResult?.pair === correctionPair && correctionResult.ok);
  const correctionStatus = !correctionPair ? null : correctionResult?.pair === correctionPair ? correctionResult.message : "Loading the frames…";
  const [cvd, setCvd] = useState<CvdKind | null>(null);
  const [log, setLog] = useState(true);
  const [range, setRange] = useState<"ceiling" | "data">("ceiling");
  const [playing, setPlaying] = useState(false);
  const [rate, setRate] = useState(5);
  const [loop, setLoop] = useState(true);
  const [opened, setOpened] = useState(false);
  // The lab's own colour tables (Colour tables page): registered in the worker once open, offered in the channel cards.
  const customTables = useBenchColourTables(labId, bench, opened, !link);
  const [rendered, setRendered] = useState<BenchRender | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [readout, setReadout] = useState<{ x: number; y: number; values: RawValue[] } | null>(null);
  const [help, setHelp] = useState(false);
  const [figure, setFigure] = useState(false);
  const [fitting, setFitting] = useState<number | null>(null);
  const [firstDrawMs, setFirstDrawMs] = useState<number | null>(null);
  // Set once on mount: the time from opening the bench to the first drawn plane is shown to the user.
  const started = useRef(0);
  useEffect(() => {
    started.current = performance.now();
  }, []);
  const viewport = useRef<ViewportHandle>(null);
  // The viewport's canvas: handed to the worker, which draws every render into it where the browser
  // can transfer a canvas (see BenchWorkerClient.surfaceFor); a new key asks for a fresh element.
  const [canvasEl, setCanvasEl] = useState<PlaneCanvas | null>(null);
  const [canvasKey, setCanvasKey] = useState(0);
  const readBack = useCallback((x: number, y: number, w: number, h: number) => bench.readCanvas(x, y, w, h), [bench]);
  const storageKey = `bench:${datasetId}`;
  // Zoom and the image point at the centre, saved with the view and restored on return.
  const [camera, setCamera] = useState<Camera | null>(null);
  const [sharing, setSharing] = useState(false);
  // Regions: members see them, editors draw them; a view link (guest, read-only) has none.
  const regions = useRegionsController(datasetId, { enabled: !link && memberDataset.data?.dataset.status === "ready", canEdit: !link && can(memberDataset.data?.role, "datasets.edit") });

  // Each person's last view of this dataset is kept on the server (restored when they return);
  // unsaved edits also survive a reload through IndexedDB. Without either: Fit from the stack statistics.
  const savedView = useQuery({
    enabled: !link,
    queryKey: ["datasets", datasetId, "view"],
    queryFn: async () => {
      try {
        return (await api<{ view: ViewStateOut }>(`/api/datasets/${datasetId}/view`)).view;
      } catch (e) {
        if (e instanceof ApiError && e.status === 404) return null;
        throw e;
      }
    },
    staleTime: Infinity,
    retry: false,
  });
  // ?view=<id> opens a named saved view (listed on the dataset page) instead of the person's last one.
  const namedViewId = link ? null : Number(search.get("view")) || null;
  const namedViews = useQuery({
    enabled: namedViewId !== null,
    queryKey: ["datasets", datasetId, "saved-views"],
    queryFn: async () => (await api<{ views: { id: number; name: string; state: Omit<ViewStateOut, "datasetId" | "updatedAt"> }[] }>(`/api/datasets/${datasetId}/saved-views`)).views,
  });
  const [startedFrom, setStartedFrom] = useState<string | null>(null);
  useEffect(() => {
    if (!datasetQuery.data || channels || (!link && savedView.isPending) || (namedViewId !== null && namedViews.isPending)) return;
    const { dataset: d, channelStats } = datasetQuery.data;
    const visibleFromUrl = search.get("ch")?.split(",").map(Number);
    const named = namedViewId !== null ? namedViews.data?.find((v) => v.id === namedViewId) : undefined;
    // A link's snapshot, else a named view asked for, else the person's last view on the server.
    const start = link ? link.data.link.state : named ? named.state : savedView.data;
    void (link ? Promise.resolve(undefined) : idbGet<ChannelState[]>(storageKey))
      .catch(() => undefined)
      .then((saved) => {
        if (named) setStartedFrom(`Opened the saved view "${named.name}".`);
        else if (namedViewId !== null) setStartedFrom("That saved view no longer exists; showing your last view.");
        const defaults: ChannelState[] = (d.channels ?? []).map((ch, c) => {
          const s = channelStats.find((x) => x.c === c);
          const black = Math.round(s?.percentiles?.["0.1"] ?? 0);
          const white = Math.max(black + 1, Math.round(s?.percentiles?.["99.9"] ?? d.ceiling ?? 65535));
          return { c, name: ch.name, colour: ch.colour.toLowerCase(), visible: true, black, white, gamma: 1, tableId: null };
        });
        const server = start;
        let base = defaults;
        if (server && server.channels.length === defaults.length) {
          base = defaults.map((ch) => {
            const v = server.channels.find((x) => x.c === ch.c);
            return v ? { ...ch, visible: v.visible, colour: v.colour.toLowerCase(), tableId: v.tableId, gamma: v.gamma, black: v.black, white: v.white } : ch;
          });
          // A link or a named view is a snapshot: its plane wins over the address; the last view yields to it.
          if (link || named || search.get("z") === null) setZ(Math.min(server.z, (d.sizeZ ?? 1) - 1));
          if (link || named || search.get("t") === null) setT(Math.min(server.t, (d.sizeT ?? 1) - 1));
          setComposite(server.blend);
          if (server.correction && !link) setCorrection(server.correction);
          if (server.zoom && server.pan) {
            const restored = { zoom: server.zoom, pan: server.pan };
            requestAnimationFrame(() => viewport.current?.setCamera(restored));
          }
        } else if (saved && saved.length === defaults.length) {
          base = saved.map((ch) => ({ ...ch, gamma: ch.gamma ?? 1, tableId: ch.tableId ?? null }));
        }
        setChannels(visibleFromUrl && !link && !named ? base.map((ch) => ({ ...ch, visible: visibleFromUrl.includes(ch.c) })) : base);
      });
  }, [datasetQuery.data, channels, search, storageKey, savedView.isPending, savedView.data, link, namedViewId, namedViews.isPending, namedViews.data]);

  // Saves the view a second after the last change; a failed save is retried on the next change.
  const [viewSaved, setViewSaved] = useState<"saved" | "failed" | null>(null);
  const presets = usePresets(labId, !link);
  const createPreset = useCreatePreset(labId);
  const [presetNote, setPresetNote] = useState<string | null>(null);
  // The current view as the server stores it (view state, saved views and link snapshots share it).
  const viewBody = useMemo(
    () =>
      channels
        ? {
            z,
            t,
            blend: composite,
            ...(camera ? { zoom: camera.zoom, pan: camera.pan } : {}),
            // The flat/dark choice belongs to the lab's datasets; a link's snapshot leaves it out.
            ...(link ? {} : { correction }),
            channels: channels.map((ch) => ({ c: ch.c, visible: ch.visible, colour: ch.colour, tableId: ch.tableId, gamma: ch.gamma, black: ch.black, white: ch.white })),
          }
        : null,
    [channels, z, t, composite, camera, correction, link],
  );
  useEffect(() => {
    // Through a link nothing is saved: a guest's changes stay in this tab.
    if (!viewBody || link) return;
    const handle = setTimeout(() => {
      api(`/api/datasets/${datasetId}/view`, { method: "PUT", body: viewBody }).then(
        () => setViewSaved("saved"),
        () => setViewSaved("failed"),
      );
    }, 1000);
    return () => clearTimeout(handle);
  }, [viewBody, datasetId, link]);

  useEffect(() => {
    if (channels && !link) void idbSet(storageKey, channels).catch(() => undefined);
  }, [channels, storageKey, link]);

  // The plane and visible channels live in the URL, so a reload or a copied address opens the same view.
  useEffect(() => {
    if (!channels) return;
    const params = new URLSearchParams({ z: String(z), t: String(t), ch: channels.filter((c) => c.visible).map((c) => c.c).join(",") });
    // history.replaceState (which Next keeps in step with useSearchParams) rather than router.replace:
    // a router navigation fired by this timer could cancel a navigation the person just started.
    const handle = setTimeout(() => window.history.replaceState(window.history.state, "", `?${params}`), 300);
    return () => clearTimeout(handle);
  }, [z, t, channels]);

  useEffect(() => {
    if (!dataset || !planesQuery.data || opened) return;
    bench
      .open({
        datasetId,
        fileUrl: `${apiBase}/file`,
        size: dataset.sizeBytes,
        planes: planesQuery.data.map((p) => ({ ifdIndex: p.ifdIndex, ifdOffset: p.ifdOffset, c: p.c, z: p.z, t: p.t })),
        width: dataset.width ?? 0,
        height: dataset.height ?? 0,
        ceiling,
      })
      .then(() => setOpened(true))
      .catch((e: unknown) => setError(e instanceof Error ? e.message : String(e)));
  }, [bench, dataset, planesQuery.data, opened, datasetId, ceiling, apiBase]);

  // Clipping-mark colours are chosen, not fixed: the candidates farthest (CIEDE2000) from every colour
  // on screen, so the marks stay visible whatever the mapping (LOOK.md).
  const markColours = useMemo(() => {
    const visible = (channels ?? []).filter((c) => c.visible);
    const tables = visible.map((c) => (c.tableId && (findTable(c.tableId) ?? customTables.byId.get(c.tableId))) || singleHueTable(c.colour));
    const choice = chooseMarkColours(tables, visible.map((c) => c.colour));
    return { high: toHex(choice.high), low: toHex(choice.low) };
  }, [channels, customTables.byId]);

  // Channel colours must stay apart under every colour-vision deficiency. Compared on hue and chroma
  // (lightness ignored): in an overlay each channel's brightness follows its signal, so lightness
  // cannot tell channels apart. Threshold: CVD_WARNING_THRESHOLD ΔE00 (our choice, documented).
  const cvdWarning = useMemo(() => {
    const visible = (channels ?? []).filter((c) => c.visible && !c.tableId);
    if (visible.length < 2) return null;
    const result = minPairDistance(visible.map((c) => c.colour), { lightness: "ignore" });
    if (result.distance >= CVD_WARNING_THRESHOLD || !result.pair) return null;
    const [a, b] = result.pair;
    return `${visible[a].name} and ${visible[b].name} are hard to tell apart${result.vision === "normal" ? "" : ` with ${result.vision}`} (ΔE00 ${result.distance.toFixed(1)} < ${CVD_WARNING_THRESHOLD}).`;
  }, [channels]);

  // Render whenever the plane or a mapping changes; a newer render supersedes (aborts) an older one.
  // The worker draws into the transferred canvas; only without one does the main thread draw.
  useEffect(() => {
    if (!opened || !channels || !canvasEl) return;
    let stale = false;
    const surface = bench.surfaceFor(canvasEl);
    if (surface === "lost") {
      // Its worker is gone (or refused it): a new element, and this effect runs again for it.
      queueMicrotask(() => setCanvasKey((k) => k + 1));
      return;
    }
    bench
      .render({
        z,
        t,
        composite,
        clipMarks: marks ? { ...markColours, lowMode: lowMarkMode, lowPercent: lowMarkPercent, highPercent: highMarkPercent || undefined } : null,
        cvd,
        correction: correction.on && correctionReady,
        channels: channels.map((ch) => ({ c: ch.c, visible: ch.visible, black: ch.black, white: ch.white, colour: hexToRgb(ch.colour), gamma: ch.gamma, tableId: ch.tableId })),
      })
      .then((result) => {
        if (stale) return;
        if (surface === "worker" && !result.drawn) {
          // The worker could not take the canvas: continue on a new one, drawn by the main thread.
          setCanvasKey((k) => k + 1);
          return;
        }
        setRendered(result);
        setError(null);
        viewport.current?.draw(result);
        setFirstDrawMs((ms) => ms ?? Math.round(performance.now() - started.current));
      })
      .catch((e: unknown) => {
        if (stale || (e instanceof Error && e.name === "AbortError")) return;
        setError(e instanceof Error ? e.message : String(e));
      });
    return () => {
      stale = true;
    };
  }, [bench, opened, canvasEl, channels, z, t, composite, marks, markColours, cvd, correction.on, correctionReady, lowMarkMode, lowMarkPercent, highMarkPercent, customTables.registered]);

  // Loads the chosen flat-field and dark frames into the worker (one plane each, by their stored IFD offsets).
  useEffect(() => {
    if (!opened) return;
    if (correction.flatId === null || correction.darkId === null || !correctionPair) {
      void bench.setCorrection(null).catch(() => undefined);
      return;
    }
    let stale = false;
    const frame = async (id: number) => {
      const [{ dataset: d }, { planes }] = await Promise.all([
        api<{ dataset: { sizeBytes: number; width: number; height: number } }>(`/api/datasets/${id}`),
        api<{ planes: { ifdOffset: number }[] }>(`/api/datasets/${id}/planes`),
      ]);
      return { fileUrl: `/api/datasets/${id}/file`, size: d.sizeBytes, ifdOffset: planes[0].ifdOffset, width: d.width, height: d.height };
    };
    Promise.all([frame(correction.flatId), frame(correction.darkId)])
      .then(([flat, dark]) => bench.setCorrection({ flat, dark }))
      .then((info) => {
        if (stale) return;
        const message = info ? `${info.invalid} pixel${info.invalid === 1 ? "" : "s"} with flat − dark ≤ ${info.epsilon} DN are shown as invalid, not divided.` : null;
        setCorrectionResult({ pair: correctionPair, ok: true, message });
      })
      .catch((e: unknown) => {
        if (!stale) setCorrectionResult({ pair: correctionPair, ok: false, message: e instanceof Error ? e.message : String(e) });
      });
    return () => {
      stale = true;
    };
  }, [bench, opened, correction.flatId, correction.darkId, correctionPair]);

  // Playback is paced by drawn frames: the next time point is asked for once the current one is on
  // screen and 1/rate seconds have passed. A fixed timer would supersede (abort) renders that take
  // longer than one tick, so a slow connection would show almost nothing.
  const lastAdvance = useRef(0);
  useEffect(() => {
    if (!playing || !opened || !rendered || rendered.t !== t || rendered.z !== z) return;
    const wait = Math.max(0, 1000 / rate - (performance.now() - lastAdvance.current));
    const handle = setTimeout(() => {
      lastAdvance.current = performance.now();
      setT((current) => {
        const next = current + 1;
        if (next < sizeT) return next;
        if (loop) return 0;
        setPlaying(false);
        return current;
      });
    }, wait);
    return () => clearTimeout(handle);
  }, [playing, opened, rendered, t, z, rate, loop, sizeT]);

  useEffect(() => {
    if (!opened || !playing) return;
    const ahead = [1, 2, 3].map((k) => (t + k) % sizeT);
    void bench.prefetch(z, ahead).catch(() => undefined);
  }, [bench, opened, playing, t, z, sizeT]);

  // Opens a named saved view in place: plane, blend, camera and each channel's mapping.
  const openSavedView = useCallback((view: { name: string; state: Omit<ViewStateOut, "datasetId" | "updatedAt"> }) => {
    const v = view.state;
    setZ(Math.min(v.z, sizeZ - 1));
    setT(Math.min(v.t, sizeT - 1));
    setComposite(v.blend);
    setChannels(
      (all) =>
        all?.map((ch) => {
          const saved = v.channels.find((x) => x.c === ch.c);
          return saved ? { ...ch, visible: saved.visible, colour: saved.colour.toLowerCase(), tableId: saved.tableId, gamma: saved.gamma, black: saved.black, white: saved.white } : ch;
        }) ?? all,
    );
    if (v.zoom && v.pan) viewport.current?.setCamera({ zoom: v.zoom, pan: v.pan });
    setStartedFrom(`Opened the saved view "${view.name}".`);
  }, [sizeZ, sizeT]);

  const updateChannel = useCallback((c: number, patch: Partial<ChannelState>) => {
    setChannels((all) => all?.map((ch) => (ch.c === c ? { ...ch, ...patch } : ch)) ?? all);
  }, []);

  // Fit: black and white points at two percentiles of the exact integer histogram, of this plane
  // (computed in the worker) or of the whole stack (stored at ingest); black rounds down, white up.
  const fit = useCallback(
    async (c: number) => {
      setFitting(c);
      try {
        let black: number;
        let white: number;
        if (fitScope === "stack" && correction.on) throw new Error("Whole-stack Fit uses raw ingest statistics; with correction on, Fit over this plane.");
        if (fitScope === "stack") {
          const stored = datasetQuery.data?.channelStats.find((x) => x.c === c)?.percentiles ?? {};
          const low = stored[String(fitLow)];
          const high = stored[String(fitHigh)];
          if (low === undefined || high === undefined) {
            throw new Error(`Whole-stack Fit uses the percentiles stored at ingest: ${STACK_PERCENTILES.join(", ")} %.`);
          }
          [black, white] = [low, high];
        } else {
          const rect = fitScope === "visible" ? viewport.current?.visibleRect() : undefined;
          [black, white] = await bench.percentiles(z, t, c, [fitLow, fitHigh], undefined, { corrected: correction.on && correctionReady, rect });
        }
        updateChannel(c, { black: Math.floor(black), white: Math.max(Math.ceil(white), Math.floor(black) + 1) });
        setError(null);
      } catch (e) {
        setError(e instanceof Error ? e.message : String(e));
      } finally {
        setFitting(null);
      }
    },
    [bench, z, t, updateChannel, fitScope, fitLow, fitHigh, datasetQuery.data, correction.on, correctionReady],
  );

  // Applies a preset: channels matched by name, then emission wavelength, then index; percentile
  // ranges are resolved on this plane's exact histogram (Fit), count ranges used as they are.
  const applyPreset = useCallback(
    async (id: number) => {
      const preset = presets.data?.find((p) => p.id === id);
      if (!preset || !channels || !dataset) return;
      const refs = channels.map((ch) => ({ c: ch.c, name: ch.name, emissionNm: dataset.channels?.[ch.c]?.emissionNm ?? null }));
      const { pairs, unmatched } = matchPresetChannels(preset.channels, refs);
      const updates = new Map<number, Partial<ChannelState>>();
      for (const { preset: pc, c } of pairs) {
        let range: { black: number; white: number };
        if (pc.range.mode === "counts") range = { black: pc.range.black, white: pc.range.white };
        else {
          const [lo, hi] = await bench.percentiles(z, t, c, [pc.range.low, pc.range.high]);
          range = { black: Math.floor(lo), white: Math.max(Math.ceil(hi), Math.floor(lo) + 1) };
        }
        updates.set(c, { visible: pc.visible, colour: pc.colour.toLowerCase(), tableId: pc.tableId, gamma: pc.gamma, ...range });
      }
      setChannels((all) => all?.map((ch) => ({ ...ch, ...(updates.get(ch.c) ?? {}) })) ?? all);
      setComposite(preset.blend);
      // Clipping-mark settings travel with the preset; the mark colours are chosen again for the
      // colours now on screen (the stored ones are a record of what the preset's maker saw).
      const withMarks = pairs.find((p) => p.preset.clipMarks)?.preset.clipMarks;
      setMarks(Boolean(withMarks));
      if (withMarks) {
        setLowMarkMode(withMarks.lowMode ?? "black");
        if (withMarks.lowPercent !== undefined) setLowMarkPercent(withMarks.lowPercent);
        setHighMarkPercent(withMarks.highPercent ?? 0);
      }
      const how = pairs.map((p) => `${channels.find((ch) => ch.c === p.c)?.name} by ${p.by}`).join(", ");
      setPresetNote(`Applied "${preset.name}": ${how || "no channel"}${unmatched.length ? `; ${unmatched.length} preset channel${unmatched.length === 1 ? "" : "s"} matched nothing here` : ""}.`);
    },
    [presets.data, channels, dataset, bench, z, t],
  );

  // ?preset=<id> (from "Apply to…" on the Presets page) applies that preset once, when the plane is ready.
  const presetFromUrl = link ? null : Number(search.get("preset")) || null;
  const presetApplied = useRef(false);
  useEffect(() => {
    if (!presetFromUrl || presetApplied.current || !opened || !channels || !presets.data) return;
    presetApplied.current = true;
    void applyPreset(presetFromUrl);
  }, [presetFromUrl, opened, channels, presets.data, applyPreset]);

  const savePreset = useCallback(
    async (scope: "private" | "lab") => {
      if (!channels || !dataset) return;
      const name = window.prompt(scope === "lab" ? "Name of the lab preset" : "Name of your preset");
      if (!name?.trim()) return;
      const body = {
        name: name.trim(),
        scope,
        blend: composite,
        channels: channels.map(
          (ch): PresetChannel => ({
            match: { name: ch.name, emissionNm: dataset.channels?.[ch.c]?.emissionNm ?? null, index: ch.c },
            visible: ch.visible,
            colour: ch.colour,
            tableId: ch.tableId,
            gamma: ch.gamma,
            range: { mode: "counts", black: ch.black, white: ch.white },
            ...(marks ? { clipMarks: { high: markColours.high, low: markColours.low, lowMode: lowMarkMode, lowPercent: lowMarkPercent, highPercent: highMarkPercent } } : {}),
          }),
        ),
      };
      try {
        await createPreset.mutateAsync(body);
        setPresetNote(`Saved "${body.name}" (${scope === "lab" ? "shared with the lab" : "only you"}).`);
      } catch (e) {
        setPresetNote(e instanceof Error ? e.message : String(e));
      }
    },
    [channels, dataset, composite, createPreset, marks, markColours, lowMarkMode, lowMarkPercent, highMarkPercent],
  );

  const onPointer = useCallback(
    (point: { x: number; y: number } | null) => {
      if (!point || !opened) return setReadout(null);
      void bench
        .readValues(z, t, point.x, point.y)
        .then((values) => setReadout({ ...point, values }))
        .catch(() => undefined);
    },
    [bench, opened, z, t],
  );

  const onKey = useCallback(
    (e: React.KeyboardEvent) => {
      if ((e.target as HTMLElement).tagName === "INPUT" || (e.target as HTMLElement).tagName === "SELECT") return;
      const keys: Record<string, () => void> = {
        ArrowRight: () => setT((v) => Math.min(sizeT - 1, v + 1)),
        ArrowLeft: () => setT((v) => Math.max(0, v - 1)),
        ArrowUp: () => setZ((v) => Math.min(sizeZ - 1, v + 1)),
        ArrowDown: () => setZ((v) => Math.max(0, v - 1)),
        " ": () => setPlaying((p) => !p),
        "+": () => viewport.current?.zoomBy(2),
        "=": () => viewport.current?.zoomBy(2),
        "-": () => viewport.current?.zoomBy(0.5),
        "0": () => viewport.current?.fit(),
        "1": () => viewport.current?.oneToOne(),
        "?": () => setHelp((h) => !h),
        Escape: () => setHelp(false),
      };
      const action = keys[e.key];
      if (action) {
        e.preventDefault();
        action();
      }
    },
    [sizeT, sizeZ],
  );

  const chips = useMemo(() => {
    const list: string[] = [];
    for (const c of channels ?? []) if (c.visible && c.gamma !== 1) list.push(`${c.name}: gamma ${c.gamma} (non-linear)`);
    if (correction.on && correctionReady) list.push("flat/dark corrected (display only)");
    if (marks) list.push("clipping marks on");
    if (cvd) list.push(`colour-vision preview: ${cvd}`);
    if (composite === "max") list.push("maximum blend");
    if (channels?.some((c) => !c.visible)) list.push(`${channels.filter((c) => c.visible).length} of ${channels.length} channels`);
    return list;
  }, [composite, channels, marks, cvd, correction.on, correctionReady]);

  if (datasetQuery.isPending) return <p className="text-sm text-paper-700">Loading dataset…</p>;
  if (datasetQuery.isError || !dataset) return <p role="alert" className="text-sm text-fault-700">{datasetQuery.error?.message ?? "Dataset not found."}</p>;
  if (dataset.status !== "ready") {
    return (
      <div className="space-y-2 text-sm">
        <p>
          {dataset.title} is {dataset.status === "failed" ? "not readable" : "still being read"}: the bench opens once its planes are indexed.
        </p>
        {dataset.failureReason && <p className="text-fault-700">{dataset.failureReason}</p>}
        <Link href={`/labs/${labId}/datasets/${datasetId}/details`} className="text-flux-700 underline">
          Dataset details
        </Link>
      </div>
    );
  }

  const pixelSize = dataset.physicalSizeX;
  const pixelCount = (dataset.width ?? 0) * (dataset.height ?? 0);

  return (
    // The bench is a neutral dark surround (LOOK.md): no tint around the image.
    <div
      className="relative left-1/2 -my-8 flex min-h-[calc(100vh-7.5rem)] w-screen -translate-x-1/2 flex-col bg-graphite-950 text-graphite-100 outline-none"
      tabIndex={0}
      onKeyDown={onKey}
      aria-label="Bench: arrow keys move through t and z, space plays, + and − zoom, 0 fits, 1 is 1:1, ? lists keys"
    >
      <div className="flex flex-wrap items-center gap-3 border-b border-graphite-700 px-4 py-2 text-sm">
        {link ? (
          <span className="text-graphite-200">Shared view</span>
        ) : (
          <Link href={`/labs/${labId}/datasets`} className="text-graphite-200 hover:text-white">
            Datasets
          </Link>
        )}
        <span aria-hidden className="text-graphite-400">▸</span>
        <h1 className="font-medium text-white">{dataset.title}</h1>
        {dataset.lossy && <span className="rounded bg-fault-700 px-1.5 py-0.5 text-xs font-semibold text-white">lossy — not for quantification</span>}
        <span className="ml-auto flex items-center gap-3">
          {link ? (
            <>
              {link.data.viewer?.canSaveAsMine && viewBody && <SaveAsMineButton datasetId={datasetId} view={viewBody} />}
              {link.data.link.allowDownload && (
                <a href={`${apiBase}/file`} download className="text-xs text-graphite-200 underline hover:text-white">
                  Download original
                </a>
              )}
            </>
          ) : (
            <>
              {viewBody && <SavedViewsMenu datasetId={datasetId} view={viewBody} onOpen={openSavedView} />}
              {can(datasetQuery.data?.role, "share.create") && (
                <button type="button" onClick={() => setSharing(true)} disabled={!viewBody} className="rounded bg-flux-600 px-2 py-0.5 text-xs font-medium text-white hover:bg-flux-500 disabled:opacity-50">
                  Share…
                </button>
              )}
            </>
          )}
          {!link && (
          <label className="flex items-center gap-1 text-xs text-graphite-200">
            Preset
            <select
              aria-label="Preset"
              value=""
              onChange={(e) => {
                const v = e.target.value;
                if (v === "save-private") void savePreset("private");
                else if (v === "save-lab") void savePreset("lab");
                else if (v) void applyPreset(Number(v));
              }}
              className="max-w-40 rounded border border-graphite-600 bg-graphite-900 px-1 py-0.5 text-xs"
            >
              <option value="">choose…</option>
              {presets.data?.map((p) => (
                <option key={p.id} value={p.id}>
                  {p.name}
                  {p.scope === "lab" ? " (lab)" : ""}
                </option>
              ))}
              <option value="save-private">Save current as my preset…</option>
              {can(datasetQuery.data?.role, "presets.edit") && <option value="save-lab">Save current as lab preset…</option>}
            </select>
          </label>
          )}
          <label className="flex items-center gap-1 text-xs text-graphite-200">
            Blend
            <select value={composite} onChange={(e) => setComposite(e.target.value as "add" | "max")} className="rounded border border-graphite-600 bg-graphite-900 px-1 py-0.5 text-xs">
              <option value="add">additive</option>
              <option value="max">maximum</option>
            </select>
          </label>
          <label className="flex items-center gap-1 text-xs text-graphite-200">
            <input type="checkbox" checked={showScaleBar} onChange={(e) => setShowScaleBar(e.target.checked)} disabled={!pixelSize} className="accent-flux-500" />
            Scale bar
          </label>
          <label className="flex items-center gap-1 text-xs text-graphite-200">
            <input type="checkbox" checked={showTime} onChange={(e) => setShowTime(e.target.checked)} disabled={dataset.timeIncrement == null} className="accent-flux-500" />
            Time stamp
          </label>
          <label className="flex items-center gap-1 text-xs text-graphite-200">
            <input type="checkbox" checked={marks} onChange={(e) => setMarks(e.target.checked)} className="accent-flux-500" />
            Clipping marks
            {marks && (
              <span className="ml-1 flex items-center gap-1" aria-label={`Ceiling marked ${markColours.high}, at or below black marked ${markColours.low}`}>
                <span className="inline-block h-2.5 w-2.5 rounded-sm" style={{ background: markColours.high }} /> ceiling
                <span className="inline-block h-2.5 w-2.5 rounded-sm" style={{ background: markColours.low }} /> ≤ black
              </span>
            )}
          </label>
          <label className="flex items-center gap-1 text-xs text-graphite-200">
            Colour vision
            <select value={cvd ?? ""} onChange={(e) => setCvd((e.target.value || null) as CvdKind | null)} className="rounded border border-graphite-600 bg-graphite-900 px-1 py-0.5 text-xs">
              <option value="">normal</option>
              <option value="protanopia">protanopia</option>
              <option value="deuteranopia">deuteranopia</option>
              <option value="tritanopia">tritanopia</option>
            </select>
          </label>
          {!link && (
            <Link href={`/labs/${labId}/datasets/${datasetId}/details`} className="text-xs text-graphite-200 underline hover:text-white">
              Details
            </Link>
          )}
          <button type="button" onClick={() => setFigure(true)} disabled={!rendered || !channels} className="rounded border border-graphite-600 px-2 py-0.5 text-xs disabled:opacity-50">
            Export figure…
          </button>
          <button type="button" onClick={() => setHelp(true)} className="rounded border border-graphite-600 px-2 py-0.5 text-xs" aria-label="Keyboard shortcuts">
            ?
          </button>
        </span>
      </div>
      {link && (
        <p className="border-b border-graphite-700 bg-graphite-900 px-4 py-1.5 text-xs text-graphite-200" role="note">
          A shared view, read only: you may move through planes and change the mapping here, but nothing is saved
          {link.data.viewer?.canSaveAsMine ? " unless you choose “Save as my view”" : ""}.
          {link.data.link.expiresAt ? ` The link works until ${new Date(link.data.link.expiresAt).toLocaleString()}.` : ""} Display mappings are not data; research use only.
        </p>
      )}
      {startedFrom && (
        <p className="border-b border-graphite-700 bg-graphite-900 px-4 py-1.5 text-xs text-graphite-200" role="status">
          {startedFrom}
        </p>
      )}
      <div className="flex min-h-0 flex-1">
        <div className="flex min-w-0 flex-1 flex-col">
          <div className="relative min-h-[420px] flex-1">
            <div className="pointer-events-none absolute left-2 top-2 z-10 flex gap-1">
              {chips.map((chip) => (
                <span key={chip} className="rounded bg-graphite-800/90 px-1.5 py-0.5 text-[11px] text-graphite-100">
                  {chip}
                </span>
              ))}
            </div>
            <Viewport ref={viewport} width={dataset.width ?? 1} height={dataset.height ?? 1} pixelSizeUm={showScaleBar ? pixelSize : null} onPointer={onPointer} onCameraChange={setCamera} onCanvas={setCanvasEl} canvasKey={canvasKey} readBack={readBack} overlay={link ? undefined : (view) => <RegionOverlay ctl={regions} view={view} width={dataset.width ?? 1} height={dataset.height ?? 1} />} />
            {showTime && dataset.timeIncrement != null && (
              <span className="num pointer-events-none absolute right-4 top-2 z-10 text-sm text-white" aria-label="Time stamp on the image">
                {formatTime(t * dataset.timeIncrement)}
              </span>
            )}
            {!rendered && !error && <p className="absolute inset-0 grid place-items-center text-sm text-graphite-300">Reading the plane…</p>}
            {error && (
              <p role="alert" className="absolute inset-x-4 bottom-4 rounded bg-fault-700 px-3 py-2 text-sm text-white">
                {error}
              </p>
            )}
          </div>
          <div className="num flex min-h-8 flex-wrap items-center gap-x-4 border-t border-graphite-700 px-4 py-1.5 text-xs text-graphite-100" aria-live="polite" aria-label="Readout">
            {readout ? (
              <>
                <span>
                  x {readout.x} y {readout.y}
                  {pixelSize ? ` · ${(readout.x * pixelSize).toFixed(2)}, ${(readout.y * pixelSize).toFixed(2)} µm` : ""}
                </span>
                {readout.values.map((v) => (
                  <span key={v.c}>
                    {channels?.[v.c]?.name ?? `c${v.c}`} <strong className="font-semibold text-white">{v.value}</strong> <span className="text-graphite-300">DN</span>
                    <PhotoelectronReadout dn={v.value} detector={dataset?.detector} />
                    {correction.on && correctionReady && v.corrected !== undefined && (
                      <span className="text-graphite-200"> (corrected {v.corrected === null ? "invalid" : v.corrected.toFixed(1)})</span>
                    )}
                  </span>
                ))}
              </>
            ) : (
              <span className="text-graphite-300">Point at the image to read raw values.</span>
            )}
          </div>
        </div>
        <aside className="w-[22rem] shrink-0 space-y-3 overflow-y-auto border-l border-graphite-700 p-3" aria-label="Channels">
          <div className="flex items-center justify-between text-xs text-graphite-200">
            <span className="font-semibold uppercase tracking-wide">Channels</span>
            <label className="flex items-center gap-1">
              <input type="checkbox" checked={log} onChange={(e) => setLog(e.target.checked)} className="accent-flux-500" />
              Log counts
            </label>
            <label className="flex items-center gap-1">
              <input type="checkbox" checked={range === "data"} onChange={(e) => setRange(e.target.checked ? "data" : "ceiling")} className="accent-flux-500" />
              Data range
            </label>
          </div>
          <div className="flex flex-wrap items-center gap-1 text-[11px] text-graphite-200" aria-label="Fit settings">
            Fit from
            <input type="number" aria-label="Fit low percentile" min={0} max={50} step={0.01} value={fitLow} onChange={(e) => Number.isFinite(e.target.valueAsNumber) && setFitLow(Math.min(Math.max(e.target.valueAsNumber, 0), fitHigh - 0.01))} className="num w-14 rounded border border-graphite-600 bg-graphite-950 px-1 text-right" />
            % to
            <input type="number" aria-label="Fit high percentile" min={50} max={100} step={0.01} value={fitHigh} onChange={(e) => Number.isFinite(e.target.valueAsNumber) && setFitHigh(Math.max(Math.min(e.target.valueAsNumber, 100), fitLow + 0.01))} className="num w-14 rounded border border-graphite-600 bg-graphite-950 px-1 text-right" />
            % of
            <select aria-label="Fit over" value={fitScope} onChange={(e) => setFitScope(e.target.value as "plane" | "stack" | "visible")} className="rounded border border-graphite-600 bg-graphite-950 px-1 py-0.5">
              <option value="plane">this plane</option>
              <option value="stack">the whole stack</option>
              <option value="visible">the visible area</option>
            </select>
          </div>
          {marks && (
            <div className="space-y-1 text-[11px] text-graphite-200" aria-label="Clipping mark settings">
              <div className="flex flex-wrap items-center gap-1">
                <span className="inline-block h-2.5 w-2.5 rounded-sm" style={{ background: markColours.low }} />
                Mark
                <select aria-label="Low mark" value={lowMarkMode} onChange={(e) => setLowMarkMode(e.target.value as "black" | "percent")} className="rounded border border-graphite-600 bg-graphite-950 px-1 py-0.5">
                  <option value="black">at or below the black point</option>
                  <option value="percent">the lowest</option>
                </select>
                {lowMarkMode === "percent" && (
                  <>
                    <input type="number" aria-label="Lowest percent marked" min={0.001} max={50} step={0.01} value={lowMarkPercent} onChange={(e) => Number.isFinite(e.target.valueAsNumber) && setLowMarkPercent(Math.min(50, Math.max(0.001, e.target.valueAsNumber)))} className="num w-14 rounded border border-graphite-600 bg-graphite-950 px-1 text-right" />
                    %
                  </>
                )}
              </div>
              <div className="flex flex-wrap items-center gap-1">
                <span className="inline-block h-2.5 w-2.5 rounded-sm" style={{ background: markColours.high }} />
                Mark the ceiling ({ceiling}) and the highest
                <input type="number" aria-label="Highest percent marked" min={0} max={50} step={0.01} value={highMarkPercent} onChange={(e) => Number.isFinite(e.target.valueAsNumber) && setHighMarkPercent(Math.min(50, Math.max(0, e.target.valueAsNumber)))} className="num w-14 rounded border border-graphite-600 bg-graphite-950 px-1 text-right" />
                %
              </div>
            </div>
          )}
          {cvdWarning && (
            <div role="alert" className="rounded border border-[#ffd180]/50 bg-graphite-800 p-2 text-xs text-[#ffd180]">
              {cvdWarning}{" "}
              <button
                type="button"
                className="mt-1 block rounded bg-graphite-700 px-2 py-0.5 text-white hover:bg-graphite-600"
                onClick={() =>
                  setChannels((all) => {
                    if (!all) return all;
                    const safe = safeChannelColours(all.length);
                    return all.map((ch, i) => ({ ...ch, colour: safe[i].toLowerCase(), tableId: null }));
                  })
                }
              >
                Use colour-blind-safe colours
              </button>
            </div>
          )}
          {channels?.map((ch) => (
            <ChannelCard
              key={ch.c}
              channel={ch}
              extraTables={customTables.extraTables}
              stats={rendered?.channels.find((s) => s.c === ch.c)}
              ceiling={ceiling}
              pixelCount={pixelCount}
              log={log}
              range={range}
              onChange={(patch) => updateChannel(ch.c, patch)}
              onSolo={() => setChannels((all) => all?.map((x) => ({ ...x, visible: x.c === ch.c })) ?? all)}
              onFit={() => void fit(ch.c)}
              fitBusy={fitting === ch.c}
              // The detector profile's offset when the dataset names one; otherwise estimated as the
              // stack's 0.01 % point (common practice), as the acquisition check does.
              offset={dataset.detector?.offsetDn ?? datasetQuery.data?.channelStats.find((x) => x.c === ch.c)?.percentiles?.["0.01"] ?? null}
            />
          ))}
          {/* Flat/dark frames are other datasets of the lab: not reachable through a link. */}
          {!link && (
            <CorrectionPanel
              labId={labId}
              datasetId={datasetId}
              width={dataset.width ?? 0}
              height={dataset.height ?? 0}
              value={correction}
              status={correctionStatus}
              onChange={setCorrection}
            />
          )}
          {/* Regions: not through view links (a guest's bench is read-only and sees no lab data beyond the snapshot). */}
          {!link && channels && (
            <RegionsPanel ctl={regions} bench={bench} opened={opened} dataset={dataset} channels={channels} z={z} t={t} corrected={correction.on && correctionReady} />
          )}
          <p className="text-[11px] leading-snug text-graphite-300">
            Mappings change only the display; the stored counts are never changed. Colour-vision preview simulates Machado, Oliveira &amp; Fernandes (2009). Fit uses exact percentiles of the integer histogram (Hyndman &amp; Fan type 7), never a sort or a display value.
          </p>
        </aside>
      </div>
      <div className="flex flex-wrap items-center gap-x-6 gap-y-2 border-t border-graphite-700 px-4 py-2 text-xs">
        <label className="flex items-center gap-2">
          z
          <input type="range" min={0} max={Math.max(0, sizeZ - 1)} value={z} onChange={(e) => setZ(Number(e.target.value))} disabled={sizeZ < 2} aria-label="z-slice" className="w-40 accent-flux-500" />
          <span className="num">
            {z + 1}/{sizeZ}
            {dataset.physicalSizeZ ? ` · ${(z * dataset.physicalSizeZ).toFixed(2)} µm` : ""}
          </span>
        </label>
        <label className="flex items-center gap-2">
          t
          <input type="range" min={0} max={Math.max(0, sizeT - 1)} value={t} onChange={(e) => setT(Number(e.target.value))} disabled={sizeT < 2} aria-label="time point" className="w-56 accent-flux-500" />
          <span className="num" aria-label="Time label">
            {t + 1}/{sizeT}
            {dataset.timeIncrement ? ` · ${formatTime(t * dataset.timeIncrement)}` : ""}
          </span>
        </label>
        <button type="button" onClick={() => setPlaying((p) => !p)} disabled={sizeT < 2} className="rounded bg-graphite-700 px-2 py-1 font-medium text-white hover:bg-graphite-600 disabled:opacity-50">
          {playing ? "❚❚ Pause" : "▶ Play"}
        </button>
        <label className="flex items-center gap-1">
          <input type="number" aria-label="Playback rate (planes per second)" min={1} max={30} value={rate} onChange={(e) => setRate(Math.min(30, Math.max(1, e.target.valueAsNumber || 1)))} className="num w-12 rounded border border-graphite-600 bg-graphite-900 px-1 text-right" />
          /s
        </label>
        <label className="flex items-center gap-1">
          <input type="checkbox" checked={loop} onChange={(e) => setLoop(e.target.checked)} className="accent-flux-500" />
          loop
        </label>
        {presetNote && (
          <span role="status" className="text-graphite-200">
            {presetNote}
          </span>
        )}
        <span className="ml-auto text-graphite-300" role="status">
          {viewSaved === "saved" ? "View saved" : viewSaved === "failed" ? "View not saved (will retry)" : ""}
        </span>
        {firstDrawMs !== null && (
          <span className="num text-graphite-300" data-kernels={rendered?.kernels}>
            first plane drawn in {firstDrawMs} ms
          </span>
        )}
      </div>
      {help && <HelpOverlay onClose={() => setHelp(false)} />}
      {figure && channels && (
        <FigureDialog
          render={rendered}
          dataset={dataset}
          channels={channels}
          blend={composite}
          z={z}
          t={t}
          clipMarks={marks ? { ...markColours, lowMode: lowMarkMode, lowPercent: lowMarkPercent, highPercent: highMarkPercent || undefined } : null}
          cvd={cvd}
          correction={correction.on && correctionReady ? correction : null}
          onUseColours={(colours) => setChannels((all) => all?.map((ch, i) => ({ ...ch, colour: colours[i].toLowerCase(), tableId: null })) ?? all)}
          onClose={() => setFigure(false)}
        />
      )}
      {sharing && viewBody && <ShareDialog datasetId={datasetId} view={viewBody} onClose={() => setSharing(false)} />}
    </div>
  );
}
