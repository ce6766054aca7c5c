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

/** A hand-movable clock that otherwise runs with real time: for tests that drive a real browser. */
export class FollowingClock extends ManualClock {
  private offset = 0;
  constructor() {
    super(Date.now());
  }
  override now(): number {
    return Date.now() + this.offset;
  }
  override set(ms: number): void {
    this.offset = ms - Date.now();
  }
  override advance(ms: number): void {
    this.offset += ms;
  }
}
