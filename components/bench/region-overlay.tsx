"use client";

import { useCallback, useEffect, useMemo, useRef, useState } from "react";
import type { RegionShape } from "@/lib/imaging/regions";
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

/**
 * Regions state shared by the overlay (drawing, moving) and the panel (list, statistics, traces).
 * Drawing snaps rectangle, ellipse and polygon corners to pixel edges (whole numbers), so the pixels a
 * region holds are the ones its outline encloses; line ends snap to pixel centres (n + 0.5).
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
        setMoving(null);
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

  // Escape cancels a drawing in progress (and leaves the tool); Delete removes the selected region.
  useEffect(() => {
    if (!options.enabled) return;
    const onKey = (e: KeyboardEvent) => {
      const target = e.target as HTMLElement | null;
      if (target && (target.tagName === "INPUT" || target.tagName === "SELECT" || target.tagName === "TEXTAREA")) return;
      if (e.key === "Escape" && (draft || tool !== "select")) {
        setDraft(null);
        setTool("select");
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

/**
 * The regions drawn over the image as SVG in screen space (the outline stays 1–2 px wide at every
 * zoom). With a drawing tool the overlay takes the pointer; otherwise only the outlines do, so
 * dragging the image still pans.
 */
export function RegionOverlay({ ctl, view, width, height }: { ctl: RegionsController; view: ViewTransform; width: number; height: number }) {
  const svg = useRef<SVGSVGElement>(null);
  const gesture = useRef<{ kind: "draw"; start: ImagePoint } | { kind: "move"; region: RegionOut; start: ImagePoint } | null>(null);
  const drawing = ctl.tool !== "select";

  const toImage = (e: { clientX: number; clientY: number }): ImagePoint => {
    const r = svg.current!.getBoundingClientRect();
    return { x: (e.clientX - r.left - view.x) / view.scale, y: (e.clientY - r.top - view.y) / view.scale };
  };
  const clampEdge = (v: number, max: number) => Math.min(max, Math.max(0, Math.round(v)));
  const edge = (p: ImagePoint): ImagePoint => ({ x: clampEdge(p.x, width), y: clampEdge(p.y, height) });
  const centre = (p: ImagePoint): ImagePoint => ({ x: Math.min(width - 1, Math.max(0, Math.floor(p.x))) + 0.5, y: Math.min(height - 1, Math.max(0, Math.floor(p.y))) + 0.5 });

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
      {ctl.draft && <ShapeOutline shape={ctl.draft} view={view} colour="#ffffff" selected={false} interactive={false} />}
    </svg>
  );
}
