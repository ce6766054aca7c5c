/** Time as the rest of the server sees it: injected, so tests can move it by hand. */
export interface Clock {
  /** Milliseconds since the Unix epoch, UTC. */
  now(): number;
}

export const systemClock: Clock = { now: () => Date.now() };

/** A clock that only moves when told to; for tests and the demo's history generator. */
export class ManualClock implements Clock {
  constructor(private current: number) {}
  now(): number {
    return this.current;
  }
  set(ms: number): void {
    this.current = ms;
  }
  advance(ms: number): void {
    this.current += ms;
  }
}

export function toIso(ms: number): string;
export function toIso(ms: number | null): string | null;
export function toIso(ms: number | null): string | null {
  return ms === null ? null : new Date(ms).toISOString();
}
