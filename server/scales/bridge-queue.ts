import { existsSync, readFileSync, renameSync, writeFileSync, openSync, fsyncSync, closeSync } from 'node:fs';

/** A check the bridge collected and has still to see stored. */
export interface QueuedCheck {
  clientId: string;
  weights: number[];
  takenAt: string;
}

/**
 * The scale bridge's queue of checks not yet stored, kept in a JSON file so a restart or a power cut
 * of the PC loses none: each change is written to a new file, flushed to disk and renamed over the
 * old one (a reader sees the old list or the new one, never half of one). Oldest first.
 */
export class FileQueue {
  private items: QueuedCheck[];

  constructor(private readonly file: string) {
    this.items = existsSync(file) ? (JSON.parse(readFileSync(file, 'utf8')) as QueuedCheck[]) : [];
  }

  get length(): number {
    return this.items.length;
  }

  oldest(): QueuedCheck | null {
    return this.items[0] ?? null;
  }

  push(check: QueuedCheck): void {
    this.items.push(check);
    this.save();
  }

  /** Takes the check off the queue once the server stored it (or refused it for good). */
  remove(clientId: string): void {
    this.items = this.items.filter((c) => c.clientId !== clientId);
    this.save();
  }

  private save(): void {
    const temp = `${this.file}.new`;
    writeFileSync(temp, JSON.stringify(this.items));
    const fd = openSync(temp, 'r+');
    fsyncSync(fd);
    closeSync(fd);
    renameSync(temp, this.file);
  }
}
