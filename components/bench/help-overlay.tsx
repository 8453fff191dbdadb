"use client";

const keys: [string, string][] = [
  ["← →", "previous / next time point"],
  ["↑ ↓", "next / previous z-slice"],
  ["← → ↑ ↓ (region selected)", "move the region 1 px (Shift: 10); Escape lets go"],
  ["Space", "play / pause"],
  ["+ −", "zoom in / out"],
  ["0", "fit the image to the view"],
  ["1", "one image pixel per screen pixel"],
  ["Wheel, drag", "zoom at the pointer, pan"],
  ["?", "show or hide this list"],
];

export function HelpOverlay({ onClose }: { onClose: () => void }) {
  return (
    <div role="dialog" aria-modal="true" aria-label="Keyboard shortcuts" className="fixed inset-0 z-50 grid place-items-center bg-black/60" onClick={onClose}>
      <div className="w-96 rounded border border-graphite-600 bg-graphite-900 p-4 text-sm text-graphite-100" onClick={(e) => e.stopPropagation()}>
        <h2 className="mb-3 font-semibold text-white">Keyboard shortcuts</h2>
        <dl className="grid grid-cols-[7rem_1fr] gap-y-1.5">
          {keys.map(([k, what]) => (
            <div key={k} className="contents">
              <dt className="num text-white">{k}</dt>
              <dd className="text-graphite-200">{what}</dd>
            </div>
          ))}
        </dl>
        <button type="button" autoFocus onClick={onClose} className="mt-4 rounded bg-flux-700 px-3 py-1 text-white">
          Close
        </button>
      </div>
    </div>
  );
}
