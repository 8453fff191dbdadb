"use client";

import { useCallback, useEffect, useMemo, useRef, useState } from "react";
import { dragHandle, handlesOf, snapToCentre, snapToEdge, type HandleId, type RegionShape } from "@/lib/imaging/regions";
import { geometryOfShape, moveShape, shapeOf, useRegionMutations, useRegions } from "@/lib/client/regions";
import type { RegionOut } from "@/lib/schemas/region";
import type { ImagePoint } from "./viewport";

export type RegionTool = "select" | "rect" | "ellipse" | "polygon" | "line";

/** The viewport's transform: screen = image · scale + (x, y), relative to the viewport box. */
export interface ViewTransform {
  scale: number;
  x: number;
  y: number;
}

const kindLabel: Record<RegionOut["kind"], string> = { rect: "Rectangle", ellipse: "Ellipse", polygon: "Polygon", line: "Line" };

/** How long the arrow keys wait after the last nudge before saving the region. */
const NUDGE_SAVE_MS = 500;

/**
 * Regions state shared by the overlay (drawing, moving, reshaping) and the panel (list, statistics,
 * traces). Drawing snaps rectangle, ellipse and polygon corners to pixel edges (whole numbers), so the
 * pixels a region holds are the ones its outline encloses; line ends snap to pixel centres (n + 0.5).
 * Handles snap the same way (lib/imaging/regions.ts dragHandle).
 */
export function useRegionsController(datasetId: number, options: { enabled: boolean; canEdit: boolean }) {
  const list = useRegions(datasetId, options.enabled);
  const { create, update, remove } = useRegionMutations(datasetId);
  const [tool, setTool] = useState<RegionTool>("select");
  const [selectedId, setSelectedId] = useState<number | null>(null);
  const [error, setError] = useState<string | null>(null);
  // A region being moved: its shape follows the pointer until the move is saved.
  const [moving, setMoving] = useState<{ id: number; shape: RegionShape } | null>(null);
  const [draft, setDraft] = useState<RegionShape | null>(null);

  const regions = useMemo(() => list.data ?? [], [list.data]);
  const selected = regions.find((r) => r.id === selectedId) ?? null;

  const add = useCallback(
    async (shape: RegionShape) => {
      setError(null);
      const n = regions.filter((r) => r.kind === shape.kind).length + 1;
      try {
        const region = await create.mutateAsync({ name: `${kindLabel[shape.kind]} ${n}`, kind: shape.kind, geometry: geometryOfShape(shape) } as never);
        setSelectedId(region.id);
        // Back to selecting, so the new region can be moved at once (one region per tool choice).
        setTool("select");
      } catch (e) {
        setError(e instanceof Error ? e.message : String(e));
      }
    },
    [create, regions],
  );

  const save = useCallback(
    async (region: RegionOut, changes: { name?: string; shape?: RegionShape }) => {
      setError(null);
      try {
        await update.mutateAsync({ id: region.id, version: region.version, name: changes.name, geometry: changes.shape ? geometryOfShape(changes.shape) : undefined });
      } catch (e) {
        setError(e instanceof Error ? e.message : String(e));
      } finally {
        // Clear the moving shape only if it is still the one saved: arrow-key nudges made while the
        // save was on its way stay on screen and are saved next.
        setMoving((m) => (m && m.id === region.id && (!changes.shape || JSON.stringify(m.shape) === JSON.stringify(changes.shape)) ? null : m));
      }
    },
    [update],
  );

  const removeRegion = useCallback(
    async (id: number) => {
      setError(null);
      try {
        await remove.mutateAsync(id);
        setSelectedId((s) => (s === id ? null : s));
      } catch (e) {
        setError(e instanceof Error ? e.message : String(e));
      }
    },
    [remove],
  );

  // Arrow keys nudge the selected region by one image pixel (Shift: 10) for editors; the region is
  // saved once the keys have rested for NUDGE_SAVE_MS. The listener runs in the capture phase so that
  // the bench's own arrow keys (t and z) do not also act while a region is selected; Escape deselects.
  const latest = useRef({ regions, selectedId, moving, tool, canEdit: options.canEdit, busy: update.isPending, save });
  useEffect(() => {
    latest.current = { regions, selectedId, moving, tool, canEdit: options.canEdit, busy: update.isPending, save };
  });
  useEffect(() => {
    if (!options.enabled) return;
    let timer: ReturnType<typeof setTimeout> | null = null;
    const saveNudge = () => {
      const l = latest.current;
      // A save on its way: wait for the region's new version, then save the nudged shape.
      if (l.busy) {
        timer = setTimeout(saveNudge, 100);
        return;
      }
      timer = null;
      const region = l.regions.find((r) => r.id === l.moving?.id);
      if (region && l.moving && JSON.stringify(l.moving.shape) !== JSON.stringify(shapeOf(region))) void l.save(region, { shape: l.moving.shape });
      else setMoving(null);
    };
    const steps: Record<string, [number, number]> = { ArrowLeft: [-1, 0], ArrowRight: [1, 0], ArrowUp: [0, -1], ArrowDown: [0, 1] };
    const onKey = (e: KeyboardEvent) => {
      const l = latest.current;
      const step = steps[e.key];
      if (!step || l.selectedId === null || !l.canEdit || l.tool !== "select" || e.altKey || e.ctrlKey || e.metaKey) return;
      const target = e.target as HTMLElement | null;
      if (target && (target.tagName === "INPUT" || target.tagName === "SELECT" || target.tagName === "TEXTAREA" || target.isContentEditable || target.closest("dialog"))) return;
      const region = l.regions.find((r) => r.id === l.selectedId);
      if (!region) return;
      e.preventDefault();
      e.stopPropagation();
      const n = e.shiftKey ? 10 : 1;
      const base = l.moving?.id === region.id ? l.moving.shape : shapeOf(region);
      const shape = moveShape(base, step[0] * n, step[1] * n);
      latest.current = { ...l, moving: { id: region.id, shape } };
      setMoving({ id: region.id, shape });
      if (timer) clearTimeout(timer);
      timer = setTimeout(saveNudge, NUDGE_SAVE_MS);
    };
    window.addEventListener("keydown", onKey, { capture: true });
    return () => {
      window.removeEventListener("keydown", onKey, { capture: true });
      if (timer) clearTimeout(timer);
    };
  }, [options.enabled]);

  // Escape cancels a drawing in progress (and leaves the tool), or else lets go of the selected
  // region; Delete removes the selected region.
  useEffect(() => {
    if (!options.enabled) return;
    const onKey = (e: KeyboardEvent) => {
      const target = e.target as HTMLElement | null;
      // Keys pressed in a field or inside an open dialog belong to them, not to the regions.
      if (target && (target.tagName === "INPUT" || target.tagName === "SELECT" || target.tagName === "TEXTAREA" || target.closest('dialog, [role="dialog"]'))) return;
      if (e.key === "Escape" && (draft || tool !== "select")) {
        setDraft(null);
        setTool("select");
      } else if (e.key === "Escape" && selectedId !== null) {
        setSelectedId(null);
      } else if ((e.key === "Delete" || e.key === "Backspace") && selectedId !== null && options.canEdit) {
        e.preventDefault();
        void removeRegion(selectedId);
      }
    };
    window.addEventListener("keydown", onKey);
    return () => window.removeEventListener("keydown", onKey);
  }, [options.enabled, options.canEdit, draft, tool, selectedId, removeRegion]);

  return {
    enabled: options.enabled,
    canEdit: options.canEdit,
    list,
    regions,
    selected,
    selectedId,
    select: setSelectedId,
    tool,
    setTool: (t: RegionTool) => {
      setDraft(null);
      setTool(t);
    },
    draft,
    setDraft,
    moving,
    setMoving,
    add,
    save,
    removeRegion,
    error,
    busy: create.isPending || update.isPending || remove.isPending,
  };
}

export type RegionsController = ReturnType<typeof useRegionsController>;

function points(shape: RegionShape, v: ViewTransform): string {
  const s = (x: number, y: number) => `${x * v.scale + v.x},${y * v.scale + v.y}`;
  switch (shape.kind) {
    case "rect":
      return [s(shape.x, shape.y), s(shape.x + shape.width, shape.y), s(shape.x + shape.width, shape.y + shape.height), s(shape.x, shape.y + shape.height)].join(" ");
    case "polygon":
      return shape.points.map(([x, y]) => s(x, y)).join(" ");
    default:
      return "";
  }
}

function ShapeOutline({ shape, view, colour, selected, label, interactive, onPointerDown }: {
  shape: RegionShape;
  view: ViewTransform;
  colour: string;
  selected: boolean;
  label?: string;
  interactive: boolean;
  onPointerDown?: (e: React.PointerEvent) => void;
}) {
  const common = {
    stroke: colour,
    strokeWidth: selected ? 2.5 : 1.5,
    fill: selected ? `${colour}22` : "transparent",
    style: { pointerEvents: interactive ? ("all" as const) : ("none" as const), cursor: interactive ? "move" : undefined },
    onPointerDown,
  };
  let node: React.ReactNode;
  let anchor: [number, number];
  if (shape.kind === "ellipse") {
    node = <ellipse cx={shape.cx * view.scale + view.x} cy={shape.cy * view.scale + view.y} rx={shape.rx * view.scale} ry={shape.ry * view.scale} {...common} />;
    anchor = [(shape.cx - shape.rx) * view.scale + view.x, (shape.cy - shape.ry) * view.scale + view.y];
  } else if (shape.kind === "line") {
    const x1 = shape.x1 * view.scale + view.x;
    const y1 = shape.y1 * view.scale + view.y;
    node = (
      <g>
        {/* A wide invisible stroke makes the line easy to pick. */}
        <line x1={x1} y1={y1} x2={shape.x2 * view.scale + view.x} y2={shape.y2 * view.scale + view.y} stroke="transparent" strokeWidth={10} style={common.style} onPointerDown={onPointerDown} />
        <line x1={x1} y1={y1} x2={shape.x2 * view.scale + view.x} y2={shape.y2 * view.scale + view.y} stroke={colour} strokeWidth={common.strokeWidth} style={{ pointerEvents: "none" }} />
      </g>
    );
    anchor = [x1, y1];
  } else {
    node = shape.kind === "polygon" && shape.points.length < 3 ? <polyline points={points(shape, view)} {...common} fill="none" /> : <polygon points={points(shape, view)} {...common} />;
    const [x0, y0] = shape.kind === "rect" ? [shape.x, shape.y] : shape.points[0];
    anchor = [x0 * view.scale + view.x, y0 * view.scale + view.y];
  }
  return (
    <g>
      {node}
      {label && (
        <text x={anchor[0]} y={anchor[1] - 4} fill={colour} fontSize={11} style={{ pointerEvents: "none", paintOrder: "stroke" }} stroke="#000" strokeWidth={3}>
          {label}
        </text>
      )}
    </g>
  );
}

/** Handle side, screen pixels: the same at every zoom, since the overlay draws in screen space. */
const HANDLE_PX = 9;

const cornerCursor = { nw: "nwse-resize", se: "nwse-resize", ne: "nesw-resize", sw: "nesw-resize" } as const;
const cornerName = { nw: "top-left", ne: "top-right", sw: "bottom-left", se: "bottom-right" } as const;

/** Square grips on the selected region: bounding-box corners, polygon vertices or line ends. */
function Handles({ shape, view, colour, onPointerDown }: { shape: RegionShape; view: ViewTransform; colour: string; onPointerDown: (e: React.PointerEvent, handle: HandleId) => void }) {
  return (
    <g data-testid="region-handles">
      {handlesOf(shape).map((h) => {
        const sx = h.x * view.scale + view.x;
        const sy = h.y * view.scale + view.y;
        const label = h.id.kind === "corner" ? `Resize from the ${cornerName[h.id.corner]} corner` : h.id.kind === "vertex" ? `Move corner ${h.id.index + 1}` : `Move end ${h.id.end}`;
        return (
          <g key={h.key}>
            {/* A dark rim keeps the white square visible on bright pixels too. */}
            <rect x={sx - HANDLE_PX / 2 - 1.5} y={sy - HANDLE_PX / 2 - 1.5} width={HANDLE_PX + 3} height={HANDLE_PX + 3} fill="#000000" opacity={0.6} style={{ pointerEvents: "none" }} />
            <rect
            data-handle={h.key}
            aria-label={label}
            x={sx - HANDLE_PX / 2}
            y={sy - HANDLE_PX / 2}
            width={HANDLE_PX}
            height={HANDLE_PX}
            fill="#ffffff"
            stroke={colour}
            strokeWidth={1.5}
            style={{ pointerEvents: "all", cursor: h.id.kind === "corner" ? cornerCursor[h.id.corner] : "move" }}
            onPointerDown={(e) => onPointerDown(e, h.id)}
          />
          </g>
        );
      })}
    </g>
  );
}

/**
 * The regions drawn over the image as SVG in screen space (the outline stays 1–2 px wide at every
 * zoom). With a drawing tool the overlay takes the pointer; otherwise only the outlines do, so
 * dragging the image still pans.
 */
export function RegionOverlay({ ctl, view, width, height }: { ctl: RegionsController; view: ViewTransform; width: number; height: number }) {
  const svg = useRef<SVGSVGElement>(null);
  const gesture = useRef<{ kind: "draw"; start: ImagePoint } | { kind: "move"; region: RegionOut; start: ImagePoint } | { kind: "handle"; region: RegionOut; handle: HandleId } | null>(null);
  const drawing = ctl.tool !== "select";
  const selectedRegion = ctl.regions.find((r) => r.id === ctl.selectedId) ?? null;
  const selectedShape = selectedRegion ? { region: selectedRegion, shape: ctl.moving?.id === selectedRegion.id ? ctl.moving.shape : shapeOf(selectedRegion) } : null;

  const toImage = (e: { clientX: number; clientY: number }): ImagePoint => {
    const r = svg.current!.getBoundingClientRect();
    return { x: (e.clientX - r.left - view.x) / view.scale, y: (e.clientY - r.top - view.y) / view.scale };
  };
  const edge = (p: ImagePoint): ImagePoint => snapToEdge(p, width, height);
  const centre = (p: ImagePoint): ImagePoint => snapToCentre(p, width, height);

  const shapeFromDrag = (a: ImagePoint, b: ImagePoint): RegionShape | null => {
    if (ctl.tool === "line") {
      const p = centre(a);
      const q = centre(b);
      return { kind: "line", x1: p.x, y1: p.y, x2: q.x, y2: q.y };
    }
    const p = edge(a);
    const q = edge(b);
    const x = Math.min(p.x, q.x);
    const y = Math.min(p.y, q.y);
    const w = Math.abs(p.x - q.x);
    const h = Math.abs(p.y - q.y);
    if (ctl.tool === "rect") return { kind: "rect", x, y, width: w, height: h };
    if (ctl.tool === "ellipse") return { kind: "ellipse", cx: x + w / 2, cy: y + h / 2, rx: w / 2, ry: h / 2 };
    return null;
  };
  const usable = (s: RegionShape | null): s is RegionShape =>
    !!s && (s.kind === "rect" ? s.width > 0 && s.height > 0 : s.kind === "ellipse" ? s.rx > 0 && s.ry > 0 : s.kind === "line" ? s.x1 !== s.x2 || s.y1 !== s.y2 : true);

  const finishPolygon = () => {
    const d = ctl.draft;
    if (d?.kind === "polygon" && d.points.length >= 3) void ctl.add(d);
    ctl.setDraft(null);
  };

  return (
    <svg
      ref={svg}
      className="absolute inset-0 h-full w-full"
      style={{ pointerEvents: drawing ? "all" : "none", cursor: drawing ? "crosshair" : undefined }}
      aria-label={drawing ? `Drawing a ${ctl.tool}: drag on the image${ctl.tool === "polygon" ? " (click corners, double-click or Enter to close)" : ""}; Escape cancels` : "Regions"}
      data-testid="region-overlay"
      onPointerDown={(e) => {
        if (!drawing || e.button !== 0) return;
        e.stopPropagation();
        const p = toImage(e);
        if (ctl.tool === "polygon") {
          const q = edge(p);
          const d = ctl.draft;
          if (d?.kind === "polygon") {
            const [fx, fy] = d.points[0];
            // A click on the first corner closes the polygon.
            if (d.points.length >= 3 && Math.hypot((fx - q.x) * view.scale, (fy - q.y) * view.scale) < 8) return finishPolygon();
            ctl.setDraft({ kind: "polygon", points: [...d.points, [q.x, q.y]] });
          } else ctl.setDraft({ kind: "polygon", points: [[q.x, q.y]] });
          return;
        }
        gesture.current = { kind: "draw", start: p };
        svg.current?.setPointerCapture?.(e.pointerId);
        ctl.setDraft(shapeFromDrag(p, p));
      }}
      onDoubleClick={(e) => {
        if (ctl.tool !== "polygon") return;
        e.stopPropagation();
        // The double-click's two clicks each added a corner at the same place: drop the repeat.
        const d = ctl.draft;
        if (d?.kind === "polygon") {
          const pts = d.points.filter((p, i) => i === 0 || p[0] !== d.points[i - 1][0] || p[1] !== d.points[i - 1][1]);
          if (pts.length >= 3) void ctl.add({ kind: "polygon", points: pts });
        }
        ctl.setDraft(null);
      }}
      onPointerMove={(e) => {
        const g = gesture.current;
        if (!g) return;
        const p = toImage(e);
        if (g.kind === "draw") ctl.setDraft(shapeFromDrag(g.start, p));
        else if (g.kind === "handle") ctl.setMoving({ id: g.region.id, shape: dragHandle(shapeOf(g.region), g.handle, p, width, height) });
        else {
          const dx = Math.round(p.x - g.start.x);
          const dy = Math.round(p.y - g.start.y);
          ctl.setMoving({ id: g.region.id, shape: moveShape(shapeOf(g.region), dx, dy) });
        }
      }}
      onPointerUp={(e) => {
        const g = gesture.current;
        gesture.current = null;
        if (!g) return;
        e.stopPropagation();
        if (g.kind === "draw") {
          const shape = shapeFromDrag(g.start, toImage(e));
          ctl.setDraft(null);
          if (usable(shape)) void ctl.add(shape);
        } else if (ctl.moving && ctl.moving.id === g.region.id) {
          // A move or a handle drag: save the new geometry (with the version it was based on).
          const m = ctl.moving;
          const original = shapeOf(g.region);
          if (JSON.stringify(m.shape) !== JSON.stringify(original)) void ctl.save(g.region, { shape: m.shape });
          else ctl.setMoving(null);
        }
      }}
      onKeyDown={(e) => {
        if (e.key === "Enter" && ctl.tool === "polygon") finishPolygon();
      }}
    >
      {ctl.regions.map((region) => {
        const shape = ctl.moving?.id === region.id ? ctl.moving.shape : shapeOf(region);
        const selected = region.id === ctl.selectedId;
        return (
          <ShapeOutline
            key={region.id}
            shape={shape}
            view={view}
            colour={region.colour}
            selected={selected}
            label={region.name}
            interactive={!drawing}
            onPointerDown={(e) => {
              if (drawing || e.button !== 0) return;
              // Keep the viewport from panning: this press selects (and, for editors, moves) the region.
              e.stopPropagation();
              ctl.select(region.id);
              if (ctl.canEdit) {
                gesture.current = { kind: "move", region, start: toImage(e) };
                // Captured by the outline itself: the overlay does not take the pointer outside drawing.
                (e.currentTarget as Element).setPointerCapture?.(e.pointerId);
              }
            }}
          />
        );
      })}
      {ctl.canEdit && !drawing && selectedShape && (
        <Handles
          shape={selectedShape.shape}
          view={view}
          colour={selectedShape.region.colour}
          onPointerDown={(e, handle) => {
            if (e.button !== 0) return;
            // Keep the viewport from panning and the outline from starting a move.
            e.stopPropagation();
            gesture.current = { kind: "handle", region: selectedShape.region, handle };
            (e.currentTarget as Element).setPointerCapture?.(e.pointerId);
          }}
        />
      )}
      {ctl.draft && <ShapeOutline shape={ctl.draft} view={view} colour="#ffffff" selected={false} interactive={false} />}
    </svg>
  );
}
