"use client";

import { useSyncExternalStore } from "react";

const subscribe = () => () => {};

/** True once React has hydrated on the client; forms mark themselves ready with it (browser tests wait for it). */
export function useHydrated(): boolean {
  return useSyncExternalStore(subscribe, () => true, () => false);
}
